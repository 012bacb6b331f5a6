/**
 * Ends the test output with the slowest test files (wall seconds each: collecting
 * the file plus its tests and hooks) and one plain line, "tests: N passed, N failed,
 * N skipped", that any CI log reader understands (vitest's own summary is styled text).
 * The file times are figures for finding where the suite's time goes, never checks.
 */
import path from 'node:path';
import type { Reporter, TestModule } from 'vitest/node';

/** How many of the slowest files to list. */
const SLOWEST_SHOWN = 15;

/** Wall seconds of one test file: import and collection, then its tests and hooks. */
function fileSeconds(m: TestModule): number {
  const d = m.diagnostic();
  return (d.collectDuration + d.setupDuration + d.duration) / 1000;
}

export default class SummaryReporter implements Reporter {
  onTestRunEnd(testModules: ReadonlyArray<TestModule>, unhandledErrors: ReadonlyArray<unknown>): void {
    let passed = 0, failed = 0, skipped = 0;
    for (const m of testModules) {
      for (const t of m.children.allTests()) {
        const state = t.result().state;
        if (state === 'passed') passed++;
        else if (state === 'failed') failed++;
        else skipped++;
      }
      // a file that failed to load has no tests to count: count it as a failure
      if (m.state() === 'failed' && [...m.children.allTests()].length === 0) failed++;
    }
    failed += unhandledErrors.length;
    const timed = testModules.map((m) => ({ file: path.relative(process.cwd(), m.moduleId), s: fileSeconds(m) })).sort((a, b) => b.s - a.s);
    const total = timed.reduce((sum, t) => sum + t.s, 0);
    const lines = timed.slice(0, SLOWEST_SHOWN).map((t) => `  ${t.s.toFixed(1).padStart(7)} s  ${t.file}`);
    if (timed.length > 1) {
      process.stdout.write(`\nslowest test files (of ${timed.length}; ${total.toFixed(0)} s summed over files):\n${lines.join('\n')}\n`);
    } else if (timed.length === 1) {
      process.stdout.write(`\ntest file time:\n${lines.join('\n')}\n`);
    }
    process.stdout.write(`\ntests: ${passed} passed, ${failed} failed, ${skipped} skipped\n`);
  }
}
