// Mutation testing of the safety-relevant core: `npm run mutate` (StrykerJS, vitest runner).
// Not part of `npm test` (it takes tens of minutes); see DEVELOPERS.md, "Mutation testing".
// One file or a few: `npm run mutate -- --mutate src/core/watchdog.ts,src/core/filter/wrench-filter.ts`
// Two focused runs side by side need their own sandbox and report folder:
// MUTATE_LANE=2 puts them in .stryker-tmp-2 and reports/mutation-2.
const lane = process.env.MUTATE_LANE ? `-${process.env.MUTATE_LANE}` : '';
/** @type {import('@stryker-mutator/api/core').PartialStrykerOptions} */
export default {
  packageManager: 'npm',
  testRunner: 'vitest',
  plugins: ['@stryker-mutator/vitest-runner'],
  // Only the fast in-process suites (core, params, review, hardening, expectations).
  // `related`: a run for some files loads only the test files that import them.
  vitest: { configFile: 'vitest.mutate.config.ts', related: true },
  mutate: ['src/core/**/*.ts', 'src/params/**/*.ts', 'src/replay/expect.ts'],
  coverageAnalysis: 'perTest',
  // The development machine is shared: one test process. Raise it on a machine of your own.
  concurrency: 1,
  // A mutant that loops for ever times out (counted as detected); keep the wait short.
  timeoutMS: 5_000,
  reporters: ['clear-text', 'progress', 'html', 'json'],
  htmlReporter: { fileName: `reports/mutation${lane}/mutation.html` },
  jsonReporter: { fileName: `reports/mutation${lane}/mutation.json` },
  // Not copied into the sandbox: build output and reports (the tests run the TypeScript sources).
  ignorePatterns: ['dist', 'out', 'bench/results', 'reports', 'test-output', '.stryker-tmp*'],
  tempDirName: `.stryker-tmp${lane}`,
  cleanTempDir: 'always',
  thresholds: { high: 90, low: 80, break: null },
};
