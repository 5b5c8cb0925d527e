import { defineConfig } from 'vitest/config';

/** The opt-in suite for a ROS 2 host: `source /opt/ros/<distro>/setup.bash && npm run test:ros-host`. */
export default defineConfig({
  test: {
    include: ['test/ros-host/**/*.test.ts'],
    testTimeout: 120_000,
    pool: 'forks',
    reporters: ['default', './test/support/summary-reporter.ts'],
  },
});
