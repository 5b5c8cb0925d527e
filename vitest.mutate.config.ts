/**
 * The suites StrykerJS runs for each mutant (`npm run mutate`): the fast, in-process tests of
 * the core, the parameters, the review regressions, the hardening checks and the expectations.
 * Slow suites (replay through the CLI, the simulated cell, bags, browsers) stay out: they would
 * multiply the run time and add little for the mutated files. Left out as well:
 * - test/core/arm-step.test.ts: it runs twenty 30 s kinematic-cell episodes while the file is
 *   collected, outside any test, so Stryker counts every core line they reach as "static" and
 *   would rerun the whole suite for each of those mutants;
 * - the review tests that run the built CLI (`dist/`, which is not copied into Stryker's
 *   sandbox) as a child process: in the sandbox they cannot pass, and a mutant in the child
 *   process is invisible to Stryker's coverage anyway;
 * - test/review/yaml-100k-keys.test.ts (a 100 000-key file, about 10 s): it reaches nearly every
 *   line of the parameter loader, so it would run for each of the loader's mutants.
 *
 * `MUTATE_TESTS` (comma-separated globs) narrows the suite for a focused run, e.g. the
 * parameter schema, whose table is built when the module loads (every mutant there is static
 * and reruns every test file that imports it): see DEVELOPERS.md, "Mutation testing".
 */
import { defineConfig } from 'vitest/config';

const ALL = ['test/core/**/*.test.ts', 'test/params/**/*.test.ts', 'test/review/**/*.test.ts', 'test/hardening/**/*.test.ts', 'test/replay/expect*.test.ts'];

const CLI_TESTS = [
  'test/review/dev-zero-inputs.test.ts',
  'test/review/expect-windows-names.test.ts',
  'test/review/out-bad-targets.test.ts',
  'test/review/out-empty-deletes-cwd.test.ts',
  'test/review/out-overwrite-marker.test.ts',
  'test/review/out-overwrites-input.test.ts',
  'test/review/stdout-write-errors.test.ts',
];

const narrowed = process.env.MUTATE_TESTS?.split(',').map((s) => s.trim()).filter((s) => s !== '');

export default defineConfig({
  test: {
    include: narrowed !== undefined && narrowed.length > 0 ? narrowed : ALL,
    exclude: ['node_modules/**', 'test/core/arm-step.test.ts', 'test/review/yaml-100k-keys.test.ts', ...CLI_TESTS],
    testTimeout: 60_000,
  },
});
