import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['test/**/*.test.ts'],
    // The opt-in ROS 2 suite runs only on a host with a sourced distro (see DEVELOPERS.md).
    exclude: ['test/ros-host/**', 'node_modules/**'],
    testTimeout: 60_000,
    pool: 'forks',
    reporters: ['default', './test/support/summary-reporter.ts'],
  },
});
