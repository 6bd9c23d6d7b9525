import { describe, expect, it } from 'vitest';
import { assessInThread, createAssessmentRunner, type AssessInput, type AssessOutput } from '../../src/jobs/assessment-runner.js';
import { createIntake } from '../../src/intake/ingest.js';
import { demoConfig, exampleNotice, memoryStore } from '../helpers.js';

const T0 = Date.parse('2027-03-04T06:00:00Z');

function setup(assessor: (input: AssessInput) => Promise<AssessOutput>, withHook = false) {
  const now = { t: T0 };
  const clock = () => new Date(now.t);
  const store = memoryStore(clock);
  const config = demoConfig((raw) => {
    if (withHook) (raw['service'] as Record<string, unknown>)['webhooks'] = [{ id: 'desk', url: 'http://127.0.0.1:1/x', secret: 'sixteen-chars-or-more', minScore: 50 }];
  });
  const intake = createIntake({ notices: store.notices, clock, futureToleranceMin: 5 });
  const runner = createAssessmentRunner({ config, store, clock, assessor: assessInThread(assessor), concurrency: 2 });
  return { store, intake, runner, now };
}

const oneRequest = (score = 70): AssessOutput => ({
  summary: { note: 'fake' },
  retireReason: null,
  requests: [
    {
      siteId: 'lantern-ridge',
      kind: 'photometry',
      score,
      windowStart: '2027-03-04T07:00:00.000Z',
      windowEnd: '2027-03-04T09:00:00.000Z',
      recommendedStart: '2027-03-04T07:10:00.000Z',
      expiresAt: '2027-03-04T09:00:00.000Z',
      body: {},
    },
  ],
});

const ORBIT = { epoch: '2027-03-01T00:00:00Z', q: 0.91, e: 0.32, i: 7.5, node: 120.1, peri: 48.7, tp: '2027-02-10T12:00:00Z', H: 25.1, G: 0.15 };

describe('assessment runner', () => {
  it('hands the assessment the orbit block as the store reads it back', async () => {
    const seen: AssessInput[] = [];
    const { intake, runner } = setup(async (input) => (seen.push(input), oneRequest()));
    intake.ingestJson(JSON.stringify(exampleNotice({ orbit: ORBIT })), 'test');
    await runner.drain();
    expect(seen[0]?.orbit).toEqual(ORBIT);
  });

  it('fails only the object whose stored orbit block no longer fits, naming the field', async () => {
    const seen: string[] = [];
    const { store, intake, runner } = setup(async (input) => (seen.push(input.objectId), oneRequest()));
    intake.ingestJson(JSON.stringify(exampleNotice({ orbit: ORBIT })), 'test');
    intake.ingestJson(JSON.stringify(exampleNotice({ noticeId: 'ex-0002', objectId: 'ZX27A02' })), 'test');
    store.db.prepare('UPDATE objects SET orbit = ? WHERE id = ?').run(JSON.stringify({ ...ORBIT, q: 'near' }), 'ZX27A01');
    await runner.drain();
    expect(seen).toEqual(['ZX27A02']);
    const failure = store.objects.getObject('ZX27A01')?.failure;
    expect(failure).toMatchObject({ kind: 'error', stage: 'assessment' });
    expect(failure?.message).toMatch(/^object ZX27A01: the orbit block does not fit its format \(q: /);
    expect(store.work.get('ZX27A01')?.state).toBe('failed');
    expect(store.work.get('ZX27A02')?.state).toBe('done');
  });

  it('fails only the object whose results the store refuses, and goes on with the others', async () => {
    const { store, intake, runner } = setup(async (input) => {
      const out = oneRequest();
      // A kind the requests table refuses (its CHECK constraint): the write fails in the runner, not in the worker.
      return input.objectId === 'ZX27A01' ? { ...out, requests: out.requests.map((r) => ({ ...r, kind: 'unheard-of' as unknown as 'photometry' })) } : out;
    });
    intake.ingestJson(JSON.stringify(exampleNotice()), 'test');
    intake.ingestJson(JSON.stringify(exampleNotice({ noticeId: 'ex-0002', objectId: 'ZX27A02' })), 'test');
    await expect(runner.drain()).resolves.toBeGreaterThanOrEqual(2);
    const failure = store.objects.getObject('ZX27A01')?.failure;
    expect(failure).toMatchObject({ kind: 'error', stage: 'assessment' });
    expect(failure?.message).toMatch(/^assessment stopped by a fault in the service: CHECK constraint failed/);
    // Retried under the queue's rules (three attempts), then given up; the other object is done.
    expect(store.work.get('ZX27A01')).toMatchObject({ state: 'failed', attempts: 3 });
    expect(store.work.get('ZX27A02')?.state).toBe('done');
  });

  it('assesses waiting objects and queues their requests with the tracklet as input', async () => {
    const seen: AssessInput[] = [];
    const { store, intake, runner } = setup(async (input) => (seen.push(input), oneRequest()), true);
    intake.ingestJson(JSON.stringify(exampleNotice()), 'test');
    expect(await runner.drain()).toBe(1);
    expect(seen[0]?.observations).toHaveLength(2);
    expect(seen[0]?.observations[0]?.observer).toEqual({ latDeg: 19.5, lonDeg: -155.2, heightM: 3000 });
    expect(store.requests.list({ objectId: 'ZX27A01', limit: 10 }).map((r) => r.state)).toEqual(['queued']);
    expect(store.work.get('ZX27A01')?.state).toBe('done');
    expect(store.deliveries.list({ limit: 10 }).map((d) => d.event)).toEqual(['request.queued']);
  });

  it('revises a queued request in place when a replan keeps its window in the same night', async () => {
    let score = 70;
    const { store, intake, runner } = setup(async () => oneRequest(score), true);
    intake.ingestJson(JSON.stringify(exampleNotice()), 'test');
    await runner.drain();
    score = 71.5;
    runner.enqueueActive();
    await runner.drain();
    const rows = store.requests.list({ objectId: 'ZX27A01', limit: 10 });
    expect(rows.map((r) => [r.state, r.revision, r.score])).toEqual([['queued', 2, 71.5]]);
    expect(store.deliveries.list({ limit: 10 }).map((d) => d.event)).toEqual(['request.queued']);
  });

  it("supersedes a queued request when the replan moves its window to another night, and announces the replan", async () => {
    let output = oneRequest(80);
    const { store, intake, runner } = setup(async () => output, true);
    intake.ingestJson(JSON.stringify(exampleNotice()), 'test');
    await runner.drain();
    const nextNight = { windowStart: '2027-03-05T07:00:00.000Z', windowEnd: '2027-03-05T09:00:00.000Z', recommendedStart: '2027-03-05T07:10:00.000Z', expiresAt: '2027-03-05T09:00:00.000Z' };
    output = { ...output, requests: output.requests.map((r) => ({ ...r, ...nextNight })) };
    runner.enqueueActive();
    await runner.drain();
    expect(store.requests.list({ objectId: 'ZX27A01', limit: 10 }).map((r) => r.state).sort()).toEqual(['queued', 'superseded']);
    expect(store.deliveries.list({ limit: 10 }).map((d) => d.event)).toContain('object.replanned');
  });

  it('keeps a failed assessment on the queue with its error, then gives up after three attempts', async () => {
    const { store, intake, runner } = setup(async () => {
      throw new Error('tracklet too short to fit');
    });
    intake.ingestJson(JSON.stringify(exampleNotice()), 'test');
    await runner.drain();
    expect(store.work.get('ZX27A01')).toMatchObject({ state: 'failed', attempts: 3, lastError: 'tracklet too short to fit' });
  });

  it('withdraws the queued requests of a retracted object with the reason and announces it', async () => {
    const { store, intake, runner } = setup(async () => oneRequest(), true);
    intake.ingestJson(JSON.stringify(exampleNotice()), 'test');
    await runner.drain();
    const retraction = exampleNotice({ noticeId: 'r', issuedAt: '2027-03-04T05:50:00Z', retracted: true, reason: 'identified with a known object' });
    delete retraction['observations'];
    intake.ingestJson(JSON.stringify(retraction), 'test');
    await runner.drain();
    const [r] = store.requests.list({ objectId: 'ZX27A01', limit: 10 });
    expect(r).toMatchObject({ state: 'withdrawn', stateReason: 'object retracted: identified with a known object' });
    expect(store.deliveries.list({ limit: 10 }).map((d) => d.event)).toContain('object.retracted');
  });

  it('retires an object with no future window anywhere, with the reason', async () => {
    const { store, intake, runner } = setup(async () => ({ summary: {}, requests: [], retireReason: 'no window at any site in the next 36 h' }));
    intake.ingestJson(JSON.stringify(exampleNotice()), 'test');
    await runner.drain();
    expect(store.objects.getObject('ZX27A01')).toMatchObject({ state: 'retired', retiredReason: 'no window at any site in the next 36 h' });
  });

  it('leaves the object waiting when a new notice arrives during its assessment', async () => {
    let ingestDuring: () => void = () => {};
    const { store, intake, runner } = setup(async () => {
      ingestDuring();
      return oneRequest();
    });
    intake.ingestJson(JSON.stringify(exampleNotice()), 'test');
    ingestDuring = () => {
      ingestDuring = () => {};
      intake.ingestJson(
        JSON.stringify(exampleNotice({ noticeId: 'late', observations: [
          { t: '2027-03-04T05:00:00Z', ra: 151.3, dec: -12.3, sigma: 0.5 },
          { t: '2027-03-04T05:20:00Z', ra: 151.31, dec: -12.3, sigma: 0.5 },
        ] })),
        'test',
      );
    };
    await runner.assessOne((store.work.claimNext(new Date(T0)) ?? { objectId: '' }).objectId);
    expect(store.work.get('ZX27A01')?.state).toBe('waiting');
  });
});
