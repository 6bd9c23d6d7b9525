import type { Reporter, TestModule } from 'vitest/node';

/**
 * A test reporter that says, as the last line of a run, whether the browser tests (test/e2e/)
 * ran: they skip where Chromium is missing, and a skip must not pass unnoticed in CI.
 * `npm test` adds it after the default reporter.
 */
export default class BrowserReport implements Reporter {
  onTestRunEnd(testModules: ReadonlyArray<TestModule>): void {
    const tests = testModules.filter((m) => m.moduleId.includes('/test/e2e/')).flatMap((m) => [...m.children.allTests()]);
    let line: string;
    if (tests.length === 0) line = 'browser tests (test/e2e): not part of this run';
    else {
      const states = tests.map((t) => t.result());
      const count = (state: string) => states.filter((r) => r.state === state).length;
      const skipped = states.filter((r) => r.state === 'skipped');
      const notes = [...new Set(skipped.map((r) => ('note' in r ? r.note : undefined)).filter((n): n is string => typeof n === 'string'))];
      line =
        skipped.length === tests.length
          ? `browser tests (test/e2e): SKIPPED, none of ${tests.length} ran${notes.length > 0 ? `: ${notes.join('; ')}` : ''}`
          : `browser tests (test/e2e): ran in headless Chromium: ${count('passed')} passed, ${count('failed')} failed, ${skipped.length} skipped`;
    }
    process.stdout.write(`\n${line}\n`);
  }
}
