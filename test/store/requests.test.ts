import { describe, expect, it } from 'vitest';
import type { NewRequest } from '../../src/store/requests.js';
import { createIntake } from '../../src/intake/ingest.js';
import { exampleNotice, fixedClock, memoryStore } from '../helpers.js';

const T0 = new Date('2027-03-04T06:00:00Z');
const at = (minutes: number) => new Date(T0.getTime() + minutes * 60_000);

function setup() {
  const store = memoryStore(fixedClock(T0.toISOString()));
  createIntake({ notices: store.notices, clock: () => T0, futureToleranceMin: 5 }).ingestJson(JSON.stringify(exampleNotice()), 'test');
  return store;
}

function proposal(kind: NewRequest['kind'], siteId = 'lantern-ridge', score = 50): NewRequest {
  return {
    siteId,
    kind,
    score,
    windowStart: at(10).toISOString(),
    windowEnd: at(130).toISOString(),
    recommendedStart: at(20).toISOString(),
    expiresAt: at(130).toISOString(),
    body: { exposures: [{ filter: 'r', exposureS: 60, count: 20 }] },
  };
}

function assess(store: ReturnType<typeof setup>, requests: NewRequest[], minutes = 0) {
  return store.requests.saveAssessment({ objectId: 'ZX27A01', createdAt: at(minutes).toISOString(), observations: 2, summary: { note: 'test' }, requests });
}

describe('request store', () => {
  it('queues the requests of an assessment', () => {
    const store = setup();
    const { created } = assess(store, [proposal('photometry'), proposal('colours')]);
    expect(created).toHaveLength(2);
    expect(store.requests.get(created[0]!)).toMatchObject({ state: 'queued', kind: 'photometry', body: { exposures: [{ filter: 'r' }] } });
  });

  it('revises a queued request in place when the new window overlaps the old one', () => {
    const store = setup();
    const [id] = assess(store, [proposal('photometry')]).created;
    const later = { ...proposal('photometry', 'lantern-ridge', 70), windowStart: at(12).toISOString(), body: { exposures: [{ filter: 'r', exposureS: 50, count: 18 }] } };
    const second = assess(store, [later], 10);
    expect(second).toMatchObject({ created: [], superseded: [], revised: [{ id, revision: 2 }] });
    expect(store.requests.get(id!)).toMatchObject({ state: 'queued', revision: 2, revisedAt: at(10).toISOString(), score: 70, windowStart: at(12).toISOString() });
    expect(store.requests.revisions(id!).map((r) => r.changes.map((c) => c.field))).toEqual([[], ['window.start', 'score', 'plan.exposures']]);
    expect(store.requests.revisions(id!)[1]!.changes[0]).toEqual({ field: 'window.start', from: at(10).toISOString(), to: at(12).toISOString() });
  });

  it('revises a request in place when its window moves within the same night', () => {
    const store = setup();
    const [id] = assess(store, [{ ...proposal('photometry'), night: '2027-03-03' }]).created;
    const moved = { ...proposal('photometry'), night: '2027-03-03', windowStart: at(200).toISOString(), windowEnd: at(260).toISOString() };
    expect(assess(store, [moved], 10).revised.map((r) => r.id)).toEqual([id]);
  });

  it('makes no revision when a replan proposes the request exactly as it is', () => {
    const store = setup();
    const [id] = assess(store, [proposal('photometry')]).created;
    expect(assess(store, [proposal('photometry')], 10)).toMatchObject({ unchanged: [id], revised: [] });
    expect(store.requests.get(id!)?.revision).toBe(1);
  });

  it('supersedes a queued request by a new id when the window moves to another night, and keeps the history', () => {
    const store = setup();
    const first = assess(store, [{ ...proposal('photometry'), night: '2027-03-03' }]);
    const nextNight: NewRequest = { ...proposal('photometry'), night: '2027-03-04', windowStart: at(24 * 60).toISOString(), windowEnd: at(26 * 60).toISOString() };
    const second = assess(store, [nextNight], 5);
    const old = store.requests.get(first.created[0]!)!;
    expect(second.created).toHaveLength(1);
    expect(old).toMatchObject({ state: 'superseded', supersededBy: second.created[0] });
    expect(store.requests.history(old.id).map((e) => e.toState)).toEqual(['queued', 'superseded']);
  });

  it('supersedes a queued request without a replacement when the kind is no longer proposed', () => {
    const store = setup();
    const first = assess(store, [proposal('photometry'), proposal('spectrum')]);
    const second = assess(store, [proposal('photometry')], 5);
    expect(second.superseded).toEqual([first.created[1]]);
    expect(store.requests.get(first.created[1]!)).toMatchObject({ state: 'superseded', supersededBy: null });
  });

  it('names the open request to lease instead of a superseded one, following a chain of replacements', () => {
    const store = setup();
    const night = (n: number): NewRequest => ({ ...proposal('photometry'), night: `2027-03-0${n}`, windowStart: at(n * 24 * 60).toISOString(), windowEnd: at(n * 24 * 60 + 120).toISOString() });
    const [a] = assess(store, [night(1)]).created;
    const [b] = assess(store, [night(2)], 5).created;
    const [c] = assess(store, [night(3)], 6).created;
    expect(store.requests.get(a!)?.supersededBy).toBe(b);
    expect(store.requests.lease(a!, 'queue-a', 600, at(7))).toMatchObject({ status: 'not_leasable', state: 'superseded', supersededBy: b, replacement: c });
  });

  it('never touches a leased request when replanning, and does not duplicate it', () => {
    const store = setup();
    const first = assess(store, [proposal('photometry'), proposal('colours')]);
    const leased = store.requests.lease(first.created[0]!, 'queue-a', 600, at(1));
    expect(leased.status).toBe('leased');
    const second = assess(store, [proposal('photometry'), { ...proposal('colours'), score: 61 }], 2);
    expect(store.requests.get(first.created[0]!)?.state).toBe('leased');
    expect(second.skipped).toHaveLength(1);
    expect(second.created).toHaveLength(0);
    expect(store.requests.get(first.created[1]!)).toMatchObject({ state: 'queued', revision: 2 });
  });

  it('lets exactly one caller lease a request; the other learns who holds it and until when', () => {
    const store = setup();
    const [id] = assess(store, [proposal('photometry')]).created;
    const a = store.requests.lease(id!, 'queue-a', 600, at(1));
    const b = store.requests.lease(id!, 'queue-b', 600, at(1));
    expect(a.status).toBe('leased');
    expect(b).toEqual({ status: 'conflict', holder: 'queue-a', until: at(11).toISOString() });
  });

  it('returns an expired lease to the queue', () => {
    const store = setup();
    const [id] = assess(store, [proposal('photometry')]).created;
    store.requests.lease(id!, 'queue-a', 60, at(1));
    expect(store.requests.expireLeases(at(1.5))).toEqual([]);
    expect(store.requests.expireLeases(at(2))).toEqual([id]);
    expect(store.requests.get(id!)).toMatchObject({ state: 'queued', leaseHolder: null });
  });

  it('keeps a renewed lease past its first expiry', () => {
    const store = setup();
    const [id] = assess(store, [proposal('photometry')]).created;
    const lease = store.requests.lease(id!, 'queue-a', 60, at(1));
    if (lease.status !== 'leased') throw new Error('not leased');
    expect(store.requests.renew(id!, lease.leaseToken, 600, at(1.9)).status).toBe('ok');
    expect(store.requests.expireLeases(at(3))).toEqual([]);
    expect(store.requests.get(id!)?.state).toBe('leased');
  });

  it('refuses an outcome with a stale lease token', () => {
    const store = setup();
    const [id] = assess(store, [proposal('photometry')]).created;
    const first = store.requests.lease(id!, 'queue-a', 60, at(1));
    if (first.status !== 'leased') throw new Error('not leased');
    store.requests.expireLeases(at(3));
    const second = store.requests.lease(id!, 'queue-b', 600, at(4));
    if (second.status !== 'leased') throw new Error('not leased');
    const stale = store.requests.recordOutcome(id!, first.leaseToken, { result: 'done', observedAt: at(5).toISOString(), notes: null }, at(5));
    expect(stale.status).toBe('bad_token');
    const good = store.requests.recordOutcome(id!, second.leaseToken, { result: 'done', observedAt: at(5).toISOString(), notes: null }, at(5));
    expect(good.status).toBe('ok');
    expect(store.requests.get(id!)?.state).toBe('done');
  });

  it('lapses a queued request once its window has passed', () => {
    const store = setup();
    const [id] = assess(store, [proposal('photometry')]).created;
    expect(store.requests.lapse(at(129))).toEqual([]);
    expect(store.requests.lapse(at(130))).toEqual([id]);
    expect(store.requests.history(id!).at(-1)).toMatchObject({ toState: 'lapsed', detail: 'window passed unobserved' });
  });

  it('withdraws the queued requests of a retracted object with the reason', () => {
    const store = setup();
    const { created } = assess(store, [proposal('photometry'), proposal('spectrum')]);
    store.requests.withdrawQueuedForObject('ZX27A01', 'false detection', at(3));
    for (const id of created) expect(store.requests.get(id)).toMatchObject({ state: 'withdrawn', stateReason: 'false detection' });
  });

  it('orders the queue by score and leaves out windows that have ended', () => {
    const store = setup();
    assess(store, [proposal('photometry', 'lantern-ridge', 40), proposal('colours', 'lantern-ridge', 80), proposal('spectrum', 'kestrel-hollow', 99)]);
    const q = store.requests.queue({ siteId: 'lantern-ridge', from: at(0).toISOString(), to: at(60).toISOString(), limit: 10 });
    expect(q.map((r) => r.kind)).toEqual(['colours', 'photometry']);
    expect(store.requests.queue({ siteId: 'lantern-ridge', from: at(200).toISOString(), to: at(300).toISOString(), limit: 10 })).toEqual([]);
  });
});

describe('requests already observed', () => {
  it('are not proposed again in the same window, but are in a later one', () => {
    const store = setup();
    const [id] = assess(store, [proposal('photometry')]).created;
    const lease = store.requests.lease(id!, 'queue-a', 7200, at(11));
    if (lease.status !== 'leased') throw new Error('not leased');
    store.requests.recordOutcome(id!, lease.leaseToken, { result: 'done', observedAt: at(60).toISOString(), notes: null }, at(61));
    const again = assess(store, [proposal('photometry')], 62);
    expect(again.created).toEqual([]);
    expect(again.skipped[0]?.reason).toMatch(/was done in this window/);
    const nextNight: NewRequest = { ...proposal('photometry'), windowStart: at(24 * 60).toISOString(), windowEnd: at(26 * 60).toISOString() };
    expect(assess(store, [nextNight], 63).created).toHaveLength(1);
  });
});
