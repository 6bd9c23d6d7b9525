import { describe, expect, it } from 'vitest';
import { loadConfig } from '../../src/config/load.js';
import { createIntake } from '../../src/intake/ingest.js';
import { runAssessTask, type AssessTask } from '../../src/jobs/assess-worker.js';
import { assessInThread, createAssessmentRunner, type AssessInput, type AssessOutput } from '../../src/jobs/assessment-runner.js';
import { simulateNight } from '../../src/planning/simulate.js';
import { memoryStore } from '../helpers.js';

const T0 = Date.parse('2027-03-15T03:00:00Z');
const config = loadConfig({ env: {} });

describe('estimates kept in the store', () => {
  it('let a replan after a restart skip the estimate, with the answer of a full recomputation', async () => {
    const now = { t: T0 };
    const clock = () => new Date(now.t);
    const store = memoryStore(clock);
    const intake = createIntake({ notices: store.notices, clock, futureToleranceMin: 5 });
    const notice = simulateNight({ now: new Date(T0), count: 1, seed: 31 })[0]!.notice;
    intake.ingestJson(JSON.stringify({ ...notice, observations: (notice['observations'] as unknown[]).slice(0, 4) }), 'test');
    const task = (input: AssessInput): AssessTask => ({ input, sites: config.sites, horizonH: 36, members: 200, weights: {} });
    const outputs: AssessOutput[] = [];
    // A fresh runner each time, as after a restart: nothing kept in memory, only in the store.
    const drainOnce = async (use: (input: AssessInput) => AssessOutput) => {
      const runner = createAssessmentRunner({ config, store, clock, concurrency: 1, assessor: assessInThread((input) => (outputs.push(use(input)), outputs.at(-1)!)) });
      await runner.drain();
      return runner;
    };
    await drainOnce((input) => runAssessTask(task(input)));
    const objectId = store.objects.listObjects({ limit: 1 })[0]!.id;
    expect(store.keptEstimates.get(objectId)?.key).toBe(outputs[0]!.estimate?.key);

    now.t += 10 * 60_000;
    const runner = await drainOnce((input) => runAssessTask(task(input)));
    runner.enqueueActive();
    await runner.drain();
    const replan = outputs.at(-1)!;
    expect(replan.estimate?.keep).toBeNull();
    // The same object planned from scratch (no kept estimate) at the same time.
    const full = runAssessTask(task({ objectId, observations: store.objects.tracklet(objectId), orbit: null, nowIso: clock().toISOString() }));
    expect(full.estimate?.keep).not.toBeNull();
    expect({ summary: replan.summary, requests: replan.requests }).toEqual({ summary: full.summary, requests: full.requests });
  }, 30_000);
});
