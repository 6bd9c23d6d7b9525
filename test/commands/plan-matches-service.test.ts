import { describe, expect, it } from 'vitest';
import { main as plan } from '../../src/commands/plan.js';
import { assessInThread, createAssessmentRunner } from '../../src/jobs/assessment-runner.js';
import { runAssessTask } from '../../src/jobs/assess-worker.js';
import { createIntake } from '../../src/intake/ingest.js';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { simulateNight } from '../../src/planning/simulate.js';
import { demoConfig, memoryStore, tempDir } from '../helpers.js';

describe('nightjar plan and the service', () => {
  it('give the same requests, windows and scores for one notice at the same time', async () => {
    const now = new Date('2027-03-04T06:00:00Z');
    const [sim] = simulateNight({ now, count: 1, seed: 21 });
    const notice = sim!.notice;
    const dir = tempDir('nightjar-plan-');
    const file = join(dir, 'notice.json');
    writeFileSync(file, JSON.stringify(notice));

    // The service: intake, work queue, assessment as the worker runs it, store.
    const config = demoConfig((raw) => {
      raw['planning'] = { horizonH: 36, members: 300, weights: {} };
    });
    const store = memoryStore(() => now);
    createIntake({ notices: store.notices, clock: () => now, futureToleranceMin: 5 }).ingestJson(JSON.stringify(notice), 'test');
    const runner = createAssessmentRunner({
      config,
      store,
      clock: () => now,
      concurrency: 1,
      assessor: assessInThread((input) => runAssessTask({ input, sites: config.sites, horizonH: 36, members: 300, weights: {} })),
    });
    await runner.drain();
    const stored = store.requests
      .list({ objectId: String(notice['objectId']), limit: 50 })
      .map((r) => `${r.siteId}/${r.kind} ${r.score} ${r.windowStart} ${r.windowEnd}`)
      .sort();

    // The command line, same notice, same clock, same ensemble size.
    const out: string[] = [];
    const io = { stdout: (t: string) => out.push(t), stderr: () => {}, env: {}, cwd: process.cwd() };
    expect(await plan(['--notice', file, '--now', now.toISOString(), '--members', '300', '--json'], io)).toBe(0);
    const printed = JSON.parse(out.join('')) as { plan: { sites: { requests: { siteId: string; kind: string; score: number; windowStart: string; windowEnd: string }[] }[] } };
    const fromCli = printed.plan.sites
      .flatMap((s) => s.requests)
      .map((r) => `${r.siteId}/${r.kind} ${r.score} ${r.windowStart} ${r.windowEnd}`)
      .sort();
    expect(fromCli).toEqual(stored);
    expect(stored.length).toBeGreaterThan(0);
  });
});
