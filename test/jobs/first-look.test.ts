import { describe, expect, it } from 'vitest';
import { loadConfig } from '../../src/config/load.js';
import { createIntake } from '../../src/intake/ingest.js';
import { runAssessTask } from '../../src/jobs/assess-worker.js';
import { assessInThread, createAssessmentRunner, type AssessOutput } from '../../src/jobs/assessment-runner.js';
import { FIRST_LOOK } from '../../src/planning/first-look.js';
import { simulateNight } from '../../src/planning/simulate.js';
import { memoryStore } from '../helpers.js';

const T0 = Date.parse('2027-03-15T03:00:00Z');
const config = loadConfig({ env: {} });

describe('first look under a backlog of new data', () => {
  it('assesses a new object cheaply while notices wait, says so in its requests, then revises them in place with the full estimate', async () => {
    const clock = () => new Date(T0);
    const store = memoryStore(clock);
    const intake = createIntake({ notices: store.notices, clock, futureToleranceMin: 5 });
    // Invented notices: the demo generator's ordinary objects (every second one of its first four kinds).
    const notices = simulateNight({ now: new Date(T0), count: 4, seed: 5 }).filter((s) => s.kind === 'ordinary');
    for (const s of notices) intake.ingestJson(JSON.stringify({ ...s.notice, observations: (s.notice['observations'] as unknown[]).slice(0, 4) }), 'test');
    const seen: { objectId: string; firstLook: boolean; output: AssessOutput }[] = [];
    const runner = createAssessmentRunner({
      config,
      store,
      clock,
      concurrency: 1,
      firstLookBacklog: 1,
      assessor: assessInThread((input) => {
        const output = runAssessTask({ input, sites: config.sites, horizonH: 36, members: 600, weights: {} });
        seen.push({ objectId: input.objectId, firstLook: input.firstLook === true, output });
        return output;
      }),
    });
    await runner.drain();
    // Two new objects: the first taken while the other waited (a first look), the second in full, then the first refined.
    const [a, b] = [seen[0]!.objectId, seen[1]!.objectId];
    expect(new Set([a, b])).toEqual(new Set(notices.map((s) => s.notice['objectId'])));
    expect(seen.map((s) => [s.objectId, s.firstLook])).toEqual([
      [a, true],
      [b, false],
      [a, false],
    ]);
    const first = seen[0]!.output;
    expect(first.requests.length).toBeGreaterThan(0);
    for (const r of first.requests) {
      const assessment = (r.body as { assessment: { firstLook?: boolean; members: number; notes: string[] } }).assessment;
      expect(assessment).toMatchObject({ firstLook: true, members: FIRST_LOOK.members });
      expect(assessment.notes.some((n) => n.startsWith('first look'))).toBe(true);
    }
    // The full assessment revised the first look's requests in place (same ids, revision 2), keeping none of its marks.
    const objectId = a;
    const requests = store.requests.list({ objectId, limit: 20 });
    const firstIds = requests.filter((r) => r.revision === 2).map((r) => r.id);
    expect(firstIds.length).toBeGreaterThan(0);
    for (const id of firstIds) expect((store.requests.get(id)!.body as { assessment: { firstLook?: boolean } }).assessment.firstLook).toBeUndefined();
    expect(store.objects.assessedInFull(objectId)).toBe(true);
    expect(store.keptEstimates.get(objectId)?.key).toBe(seen[2]!.output.estimate?.key);
  }, 60_000);
});
