/**
 * The suites StrykerJS runs for each mutant (`npm run mutate`): the fast, in-process tests of
 * the core, the parameters, the review regressions, the hardening checks and the expectations.
 * Slow suites (replay through the CLI, the simulated cell, bags, browsers) stay out: they would
 * multiply the run time and add little for the mutated files. test/core/arm-step.test.ts is
 * left out as well: it runs twenty 30 s kinematic-cell episodes while the file is collected,
 * outside any test, so Stryker counts every core line they reach as "static" and would rerun
 * the whole suite for each of those mutants (about 60 % of the watchdog's and the filter's).
 */
import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['test/core/**/*.test.ts', 'test/params/**/*.test.ts', 'test/review/**/*.test.ts', 'test/hardening/**/*.test.ts'],
    exclude: ['node_modules/**', 'test/core/arm-step.test.ts'],
    testTimeout: 60_000,
  },
});
