import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { buildApp } from '../../src/api/app.js';
import { withFailures } from '../../src/api/on-demand.js';
import { MIGRATIONS_DIR } from '../../src/config/load.js';
import { createIntake } from '../../src/intake/ingest.js';
import { createAssessmentService } from '../../src/jobs/assessment-jobs.js';
import { classifyOnDemandFailure, createOnDemandEstimates } from '../../src/jobs/on-demand-estimates.js';
import { simulateNight } from '../../src/planning/simulate.js';
import { startService } from '../../src/server.js';
import { demoConfig, memoryStore, tempDir } from '../helpers.js';

const stallingAssessment = new URL('./fixtures/stalling-assess-worker.ts', import.meta.url);
const stallingEstimate = new URL('./fixtures/stalling-estimate-worker.ts', import.meta.url);
const closers: (() => Promise<unknown>)[] = [];
afterEach(async () => {
  for (const c of closers.splice(0)) await c();
});

const NOW = new Date('2027-03-04T06:00:00Z');

/** Three invented valid notices; the first renamed so the stalling worker never finishes it. */
function notices(): Record<string, unknown>[] {
  const sims = simulateNight({ now: NOW, count: 3, seed: 21 }).map((s) => ({ ...s.notice }));
  sims[0]!['objectId'] = 'STALL27A';
  return sims;
}

function config(limits: Record<string, number>) {
  return demoConfig((raw) => {
    raw['planning'] = { horizonH: 24, members: 200, weights: {} };
    (raw['service'] as Record<string, unknown>)['workLimits'] = limits;
  });
}

describe('bounded work', () => {
  it('assesses a normal object in its usual time while a pathological one runs, then fails that one over its limit with the reason on the object', async () => {
    const cfg = config({ assessmentS: 12, slowAssessmentS: 1 });
    const clock = () => NOW;
    const store = memoryStore(clock);
    const intake = createIntake({ notices: store.notices, clock, futureToleranceMin: 5 });
    const service = createAssessmentService({ config: cfg, store, clock, workers: 1, workerScript: stallingAssessment });
    closers.push(() => service.close());
    const [stall, first, second] = notices();

    // The usual time: one normal object alone, on a worker that starts cold as the later one's does.
    intake.ingestJson(JSON.stringify(first), 'test');
    let t0 = performance.now();
    await service.runner.drain();
    const usualMs = performance.now() - t0;
    expect(store.work.get(String(first!['objectId']))?.state).toBe('done');

    // Now a pathological object and a normal one arrive together, the pathological first.
    intake.ingestJson(JSON.stringify([stall, second]), 'test');
    t0 = performance.now();
    const draining = service.runner.drain();
    const normalId = String(second!['objectId']);
    while (store.work.get(normalId)?.state !== 'done') {
      expect(performance.now() - t0, 'the normal object waited too long').toBeLessThan(1000 + 2 * usualMs + 5000);
      await new Promise((r) => setTimeout(r, 50));
    }
    const normalMs = performance.now() - t0;
    // Assessed while the pathological one still ran: within the slow threshold plus about its usual time.
    expect(store.work.get('STALL27A')?.state).toBe('running');
    expect(normalMs).toBeLessThan(1000 + 2 * usualMs + 5000);

    await draining;
    expect(performance.now() - t0).toBeLessThan(12_000 + 10_000);
    expect(store.work.get('STALL27A')).toMatchObject({ state: 'failed', attempts: 1 });
    expect(store.objects.getObject('STALL27A')?.failure).toMatchObject({ kind: 'timeout', stage: 'assessment', message: expect.stringContaining('time limit of 12.0 s') });

    // A replan does not run it again on the same data (it is answered without a worker).
    service.runner.enqueueActive();
    await service.runner.drain();
    expect(store.work.get('STALL27A')).toMatchObject({ state: 'failed', lastError: expect.stringMatching(/^not assessed again: the assessment ran over its time limit/) });
  }, 120_000);

  it('answers on-demand requests 503 with retry-after while the estimate worker is held, and refuses the held object after its limit', async () => {
    const cfg = config({ estimateS: 4, estimateWaitMs: 500 });
    const clock = () => NOW;
    const store = memoryStore(clock);
    createIntake({ notices: store.notices, clock, futureToleranceMin: 5 }).ingestJson(JSON.stringify(notices()), 'test');
    const estimates = createOnDemandEstimates({ store, members: 200, clock, timeLimitMs: 4000, waitMs: 500, heapMb: 512, workerScript: stallingEstimate });
    closers.push(() => estimates.close());
    const app = await buildApp({ config: cfg, store, clock, migrationsDir: MIGRATIONS_DIR, onDemand: withFailures(estimates, classifyOnDemandFailure) });
    closers.push(() => app.close());
    const normalId = String(notices()[1]!['objectId']);
    const held = app.inject({ url: '/v1/objects/STALL27A/ephemeris?site=lantern-ridge&step=60' });
    await new Promise((r) => setTimeout(r, 300));
    const t0 = performance.now();
    const busy = await app.inject({ url: `/v1/objects/${normalId}/ephemeris?site=lantern-ridge&step=60` });
    expect(busy.statusCode).toBe(503);
    expect(busy.headers['retry-after']).toBe('1');
    expect(busy.json().error.code).toBe('estimate_busy');
    expect(performance.now() - t0).toBeLessThan(3000);
    const picture = await app.inject({ url: `/v1/objects/${normalId}/pointing.svg?site=lantern-ridge` });
    expect(picture.statusCode).toBe(503);
    // The object's page still answers; only its picture waits.
    expect((await app.inject({ url: `/objects/${normalId}` })).statusCode).toBe(200);

    const over = await held;
    expect(over.statusCode).toBe(422);
    expect(over.json().error.message).toContain('time limit of 4.0 s');
    expect(store.objects.getObject('STALL27A')?.failure).toMatchObject({ kind: 'timeout', stage: 'estimate' });
    // Asked again on the same data: refused at once, and the worker is free for the others.
    const t1 = performance.now();
    expect((await app.inject({ url: '/v1/objects/STALL27A/ephemeris?site=lantern-ridge&step=60' })).statusCode).toBe(422);
    expect(performance.now() - t1).toBeLessThan(1000);
    expect((await app.inject({ url: `/v1/objects/${normalId}/ephemeris?site=lantern-ridge&step=60` })).statusCode).toBe(200);
  }, 120_000);

  it('stops within its deadline while a worker computes without end', async () => {
    const dir = tempDir('nightjar-stop-');
    const cfg = demoConfig((raw) => {
      const service = raw['service'] as Record<string, unknown>;
      service['port'] = 0;
      service['databasePath'] = join(dir, 'db.sqlite');
      service['inbox'] = { path: join(dir, 'inbox'), settleMs: 0, seedDemo: false, schedule: '* * * * * *' };
      service['workLimits'] = { assessmentS: 600, stopDeadlineS: 4 };
      service['logLevel'] = 'silent';
      raw['planning'] = { horizonH: 24, members: 200, weights: {} };
    });
    const running = await startService({ config: cfg, workers: 1, schedule: false, workerScripts: { assessment: stallingAssessment } });
    const intake = createIntake({ notices: running.store.notices, clock: () => new Date(), futureToleranceMin: 5 });
    const [stall] = simulateNight({ now: new Date(), count: 1, seed: 5 }).map((s) => ({ ...s.notice, objectId: 'STALL27B' }));
    intake.ingestJson(JSON.stringify(stall), 'test');
    const draining = running.jobs.runNow('assess');
    while (running.store.work.get('STALL27B')?.state !== 'running') await new Promise((r) => setTimeout(r, 50));
    await new Promise((r) => setTimeout(r, 500));
    const t0 = performance.now();
    await running.stop();
    expect(performance.now() - t0).toBeLessThan(4000 + 1000);
    await draining;
    // The object waits for the next start; the stop did not count against it.
    const { openStore } = await import('../../src/store/index.js');
    const again = openStore(join(dir, 'db.sqlite'), MIGRATIONS_DIR);
    expect(again.work.get('STALL27B')).toMatchObject({ state: 'waiting', attempts: 0 });
    again.db.close();
  }, 120_000);
});
