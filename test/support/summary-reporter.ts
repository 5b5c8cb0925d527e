/**
 * Prints one plain closing line, `vitest: N passed, N failed, N skipped`, after the
 * default reporter, so that CI logs state the count in a form any reader understands.
 */
import type { Reporter, TestModule } from 'vitest/node';

export default class SummaryReporter implements Reporter {
  onTestRunEnd(testModules: ReadonlyArray<TestModule>): void {
    let passed = 0;
    let failed = 0;
    let skipped = 0;
    for (const m of testModules) {
      for (const t of m.children.allTests()) {
        const state = t.result().state;
        if (state === 'passed') passed++;
        else if (state === 'failed') failed++;
        else skipped++;
      }
      if (m.state() === 'failed' && [...m.children.allTests()].length === 0) failed++;
    }
    process.stdout.write(`\nvitest: ${passed} passed, ${failed} failed, ${skipped} skipped\n`);
  }
}
