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
 * `MUTATE_SUITE` picks the test files that cover one part, for a focused run (`npm run mutate --
 * --mutate <files>` with `MUTATE_SUITE=<name>`; see DEVELOPERS.md, "Mutation testing"). A
 * focused run is much faster because a static mutant (one reached while a module or a test file
 * loads, outside any test: tables, constants, top-level set-up) reruns every test file of the
 * suite; its score is a lower bound of the full suite's. `MUTATE_TESTS` (comma-separated
 * globs) gives the files directly.
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

/** The tests that exercise each part directly (unit, hardening and review tests of it). */
const SUITES: Record<string, string[]> = {
  // Unit tests of the watchdog and the partner-stop detector (no arm step: quick to load).
  watchdog: ['test/core/watchdog*.test.ts', 'test/core/partner-stop.test.ts', 'test/hardening/watchdog-*.test.ts', 'test/review/trip-record.test.ts'],
  // The same plus the review tests that reach the watchdog through the arm step (slow: each mutant reloads them).
  'watchdog-wide': [
    'test/core/watchdog*.test.ts',
    'test/core/partner-stop.test.ts',
    'test/hardening/watchdog-*.test.ts',
    'test/review/{trip-record,watchdog-time,nan-time-spurious-trip,input-times,quaternion,joint-speed-unavailable,zone-view-input,wrench-gap,pre-tare-gravity,hold-link-deadlock,held-arm-stops-partner,tare-hides-load}.test.ts',
  ],
  impact: ['test/core/filter/wrench-filter.test.ts', 'test/hardening/impact-*.test.ts'],
  filter: ['test/core/filter/*.test.ts', 'test/hardening/impact-*.test.ts', 'test/review/{tare-hides-load,startup-tare-hides-squeeze,tare-pending-through-motion,pre-tare-gravity,belief-overconfident}.test.ts'],
  // The Butterworth design against SciPy (printed values and the live sweep) and the handbook, with the unit tests.
  butterworth: ['test/core/filter/butterworth.test.ts', 'test/core/filter/butterworth-*.test.ts', 'test/reference/butterworth.*.test.ts'],
  // The log labeller and the trip wording (pure functions, no arm step).
  text: ['test/core/classify.test.ts', 'test/core/trip-text.test.ts'],
  // The whole wrench filter without the arm-step property of tare-hides-load (6 s, and it
  // reaches every line of the filter's step, so it would run for each of those mutants).
  wrench: ['test/core/filter/wrench-filter.test.ts', 'test/core/filter/tare-*.test.ts', 'test/hardening/impact-*.test.ts', 'test/review/{startup-tare-hides-squeeze,tare-pending-through-motion,pre-tare-gravity}.test.ts'],
  // The policy stage: its unit tests and the review test of the legible mean (through the arm step).
  policy: ['test/core/policy.test.ts', 'test/review/legibility-mean.test.ts'],
  // The arm step's inputs and tare gating: the quick review tests that drive an ArmStep (each
  // well under a second; the bit-identical restore run and the tare property are left out).
  arm: ['test/review/{input-times,quaternion,joint-speed-unavailable,nan-time-spurious-trip,watchdog-time,wrench-gap,zone-view-input,zone-state-values,hold-link-deadlock,tare-pending-through-motion,pre-tare-gravity,startup-tare-hides-squeeze}.test.ts', 'test/core/arm-step-inputs.test.ts', 'test/core/arm-step-input-faults.test.ts'],
  // test/core/belief.test.ts is left out: its long-run underflow test takes over a minute instrumented.
  belief: ['test/core/belief-api.test.ts', 'test/hardening/belief-forgetting.test.ts'],
  expect: ['test/replay/expect*.test.ts', 'test/hardening/expect-kinds.test.ts', 'test/review/expect-aliases.test.ts'],
  // The table is built when the module loads: every mutant there is static and reruns the suite.
  schema: ['test/params/schema-table.test.ts'],
  params: ['test/params/*.test.ts', 'test/hardening/param-ceilings.test.ts', 'test/review/params-*.test.ts'],
  // The task's geometry and the velocity field: their unit tests and the path checks at load.
  geometry: ['test/core/task-model*.test.ts', 'test/params/path.test.ts', 'test/params/task-geometry.test.ts'],
  core: ['test/core/roles*.test.ts', 'test/core/task-model*.test.ts', 'test/review/{legibility-mean,params-cross-arm,adaptive-common-knowledge}.test.ts'],
};

const suite = process.env.MUTATE_SUITE;
if (suite !== undefined && suite !== '' && !(suite in SUITES)) throw new Error(`MUTATE_SUITE=${suite}: not a suite; suites: ${Object.keys(SUITES).join(', ')}`);
const narrowed = suite ? SUITES[suite] : process.env.MUTATE_TESTS?.split(',').map((s) => s.trim()).filter((s) => s !== '');

export default defineConfig({
  test: {
    include: narrowed !== undefined && narrowed.length > 0 ? narrowed : ALL,
    exclude: ['node_modules/**', 'test/core/arm-step.test.ts', 'test/review/yaml-100k-keys.test.ts', ...CLI_TESTS],
    testTimeout: 60_000,
    // MUTATE_NO_ISOLATE=1: one module cache for all test files (about twice as fast). Only with
    // --ignoreStatic: a static mutant needs the modules loaded afresh, which isolation gives.
    ...(process.env.MUTATE_NO_ISOLATE === '1' ? { isolate: false } : {}),
  },
});
