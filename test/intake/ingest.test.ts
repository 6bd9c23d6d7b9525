import { describe, expect, it } from 'vitest';
import { createIntake } from '../../src/intake/ingest.js';
import { exampleNotice, fixedClock, memoryStore } from '../helpers.js';

function setup() {
  const clock = fixedClock('2027-03-04T06:00:00Z');
  const store = memoryStore(clock);
  const intake = createIntake({ notices: store.notices, clock, futureToleranceMin: 5 });
  return { store, intake };
}

const followUp = () =>
  exampleNotice({
    noticeId: 'ex-0002',
    issuedAt: '2027-03-04T05:30:00Z',
    observations: [
      { t: '2027-03-04T04:32:33.120Z', ra: 151.24456, dec: -12.34067, sigma: 0.5, mag: 19.5, band: 'V' },
      { t: '2027-03-04T05:02:33.120Z', ra: 151.25956, dec: -12.33317, sigma: 0.5 },
    ],
  });

describe('intake', () => {
  it('stores an accepted notice verbatim and queues its object', () => {
    const { store, intake } = setup();
    const text = JSON.stringify(exampleNotice(), null, 2);
    const [result] = intake.ingestJson(text, 'test');
    expect(result).toMatchObject({ status: 'accepted', objectId: 'ZX27A01', observationsAdded: 2, queued: true });
    const row = store.notices.findNotice('Example Survey (invented)', 'ex-0001');
    expect(row?.raw).toBe(text);
    expect(store.work.get('ZX27A01')?.state).toBe('waiting');
  });

  it('stores the same sender and noticeId once', () => {
    const { store, intake } = setup();
    const text = JSON.stringify(exampleNotice());
    intake.ingestJson(text, 'test');
    const [again] = intake.ingestJson(text, 'test');
    expect(again).toMatchObject({ status: 'duplicate', sameContent: true });
    expect(store.notices.counts()).toMatchObject({ notices: 1, observations: 2 });
  });

  it('treats the same noticeId from another sender as a different notice', () => {
    const { store, intake } = setup();
    intake.ingestJson(JSON.stringify(exampleNotice()), 'test');
    intake.ingestJson(JSON.stringify(exampleNotice({ sender: 'Another Survey (invented)' })), 'test');
    expect(store.notices.counts().notices).toBe(2);
  });

  it('merges a later notice for a known object without duplicating shared observations', () => {
    const { store, intake } = setup();
    intake.ingestJson(JSON.stringify(exampleNotice()), 'test');
    store.work.claimNext(new Date('2027-03-04T06:00:00Z'));
    store.work.finish('ZX27A01', new Date('2027-03-04T06:00:01Z'));
    const [r] = intake.ingestJson(JSON.stringify(followUp()), 'test');
    expect(r).toMatchObject({ status: 'accepted', observationsAdded: 1, queued: true });
    expect(store.objects.observations('ZX27A01').map((o) => o.t)).toEqual([
      '2027-03-04T04:12:33.120Z',
      '2027-03-04T04:32:33.120Z',
      '2027-03-04T05:02:33.120Z',
    ]);
    expect(store.work.get('ZX27A01')?.state).toBe('waiting');
  });

  it('keeps a rejected notice with every reason and its raw payload', () => {
    const { store, intake } = setup();
    const bad = exampleNotice({ noticeId: 'ex-bad', observer: { lat: 95, lon: 0, height: 0 } });
    (bad['observations'] as Record<string, unknown>[])[0]!['ra'] = 400;
    const text = JSON.stringify(bad);
    const [r] = intake.ingestJson(text, 'test');
    expect(r?.status).toBe('rejected');
    const [kept] = store.notices.listRejections({ limit: 10 });
    expect(kept?.raw).toBe(text);
    expect(kept?.noticeId).toBe('ex-bad');
    expect(kept?.reasons.map((x) => x.path).sort()).toEqual(['observations[0].ra', 'observer.lat']);
  });

  it('keeps truncated JSON as a rejection', () => {
    const { store, intake } = setup();
    const text = JSON.stringify(exampleNotice()).slice(0, 80);
    const [r] = intake.ingestJson(text, 'test');
    expect(r?.status).toBe('rejected');
    expect(store.notices.listRejections({ limit: 1 })[0]?.raw).toBe(text);
  });

  it('reads each notice of an array on its own', () => {
    const { intake } = setup();
    const results = intake.ingestJson(JSON.stringify([exampleNotice(), { format: 'nope' }, followUp()]), 'test');
    expect(results.map((r) => r.status)).toEqual(['accepted', 'rejected', 'accepted']);
  });

  it('reads NDJSON line by line, a bad line rejected alone', () => {
    const { intake } = setup();
    const text = `${JSON.stringify(exampleNotice())}\n{not json\n${JSON.stringify(followUp())}\n`;
    expect(intake.ingestNdjson(text, 'test').map((r) => r.status)).toEqual(['accepted', 'rejected', 'accepted']);
  });

  it('accepts a payload that starts with a byte-order mark', () => {
    const { intake } = setup();
    expect(intake.ingestJson(`\uFEFF${JSON.stringify(exampleNotice())}`, 'test')[0]?.status).toBe('accepted');
  });

  it('marks a retracted object, keeps the reason and queues it so its requests are withdrawn', () => {
    const { store, intake } = setup();
    intake.ingestJson(JSON.stringify(exampleNotice()), 'test');
    const retraction = exampleNotice({ noticeId: 'ex-r', issuedAt: '2027-03-04T05:40:00Z', retracted: true, reason: 'false detection: a diffraction spike' });
    delete retraction['observations'];
    expect(intake.ingestJson(JSON.stringify(retraction), 'test')[0]).toMatchObject({ status: 'accepted', objectState: 'retracted' });
    expect(store.objects.getObject('ZX27A01')).toMatchObject({ state: 'retracted', retractionReason: 'false detection: a diffraction spike' });
    expect(store.work.get('ZX27A01')?.state).toBe('waiting');
  });

  it('never queues a retracted object for a notice issued before the retraction', () => {
    const { store, intake } = setup();
    const retraction = exampleNotice({ noticeId: 'ex-r', issuedAt: '2027-03-04T05:40:00Z', retracted: true, reason: 'identified with a known object' });
    delete retraction['observations'];
    intake.ingestJson(JSON.stringify(retraction), 'test');
    store.work.claimNext(new Date('2027-03-04T06:00:00Z'));
    store.work.finish('ZX27A01', new Date('2027-03-04T06:00:01Z'));
    const [r] = intake.ingestJson(JSON.stringify(followUp()), 'test');
    expect(r).toMatchObject({ status: 'accepted', objectState: 'retracted', queued: false });
    expect(store.work.get('ZX27A01')?.state).toBe('done');
  });

  it('revives a retracted object when a later notice brings new observations', () => {
    const { store, intake } = setup();
    intake.ingestJson(JSON.stringify(exampleNotice()), 'test');
    const retraction = exampleNotice({ noticeId: 'ex-r', issuedAt: '2027-03-04T05:10:00Z', retracted: true, reason: 'thought to be known' });
    delete retraction['observations'];
    intake.ingestJson(JSON.stringify(retraction), 'test');
    const [r] = intake.ingestJson(JSON.stringify(followUp()), 'test');
    expect(r).toMatchObject({ status: 'accepted', objectState: 'active', queued: true });
    expect(store.objects.getObject('ZX27A01')?.retractionReason).toBeNull();
  });
});
