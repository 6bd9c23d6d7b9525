import { afterEach, describe, expect, it } from 'vitest';
import { assessWorkerUrl } from '../../src/jobs/assessment-jobs.js';
import { runAssessTask, type AssessTask } from '../../src/jobs/assess-worker.js';
import { createTaskPool, type TaskPool } from '../../src/jobs/task-pool.js';
import { EstimationInputError } from '../../src/orbit/estimation/errors.js';
import { demoConfig } from '../helpers.js';

const pools: TaskPool<unknown, unknown>[] = [];
afterEach(async () => {
  for (const p of pools.splice(0)) await p.close();
});

function pool<I, O>(script: URL): TaskPool<I, O> {
  const p = createTaskPool<I, O>({ name: 'test', script, threads: 1, taskTimeoutMs: 60_000, heapMb: 512 });
  pools.push(p);
  return p;
}

/** Three positions at one place ten minutes apart: a valid notice, but no motion to fit. */
function motionlessTask(): AssessTask {
  const config = demoConfig();
  const observer = { latDeg: 34.21, lonDeg: -107.62, heightM: 2310 };
  const observations = ['04:00', '04:10', '04:20'].map((hm) => ({ t: `2027-03-04T${hm}:00Z`, raDeg: 150.1, decDeg: 10.2, sigmaArcsec: 0.5, mag: null, band: null, observer }));
  return {
    input: { objectId: 'ZX27Q99', observations, orbit: null, nowIso: '2027-03-04T06:00:00Z' },
    sites: config.sites,
    horizonH: config.planning.horizonH,
    members: 200,
    weights: {},
  };
}

describe('refusals across the worker boundary', () => {
  it('bring the estimator\'s refusal back from the assessment worker as a refusal with its message', async () => {
    const task = motionlessTask();
    let thrown: unknown = null;
    try {
      runAssessTask(task);
    } catch (err) {
      thrown = err;
    }
    expect(thrown).toBeInstanceOf(EstimationInputError);
    const result = await pool<AssessTask, unknown>(assessWorkerUrl()).run(task);
    expect(result).toEqual({ ok: false, failure: { kind: 'refused', message: (thrown as Error).message } });
    expect((thrown as Error).message).toMatch(/every observation has the same position/);
  });

  it('keep a refusal a refusal whatever its class is called', async () => {
    const renamed = pool<{ name: string }, unknown>(new URL('./fixtures/renamed-refusal-worker.ts', import.meta.url));
    for (const name of ['PlanningInputError', 'PlannerRefusal', 'e']) {
      expect(await renamed.run({ name })).toEqual({ ok: false, failure: { kind: 'refused', message: 'horizonH = -1: expected a number of hours > 0' } });
    }
  });
});
