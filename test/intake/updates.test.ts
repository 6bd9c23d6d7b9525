import { describe, expect, it } from 'vitest';
import { createIntake } from '../../src/intake/ingest.js';
import { exampleNotice, fixedClock, memoryStore } from '../helpers.js';

function setup() {
  const clock = fixedClock('2027-03-04T06:00:00Z');
  const store = memoryStore(clock);
  const intake = createIntake({ notices: store.notices, clock, futureToleranceMin: 5 });
  intake.ingestJson(JSON.stringify(exampleNotice()), 'test');
  return { store, intake };
}

const position = (t: string, ra = 151.26) => ({ t, ra, dec: -12.333, sigma: 0.4, mag: 19.6, band: 'V' });

describe('an update of a known object', () => {
  it('is merged with one position when it comes from the sender that reported the object', () => {
    const { store, intake } = setup();
    const [r] = intake.ingestJson(JSON.stringify(exampleNotice({ noticeId: 'ex-0002', observations: [position('2027-03-04T05:40:00Z')] })), 'test');
    expect(r).toMatchObject({ status: 'accepted', observationsAdded: 1, queued: true });
    expect(store.objects.tracklet('ZX27A01')).toHaveLength(3);
  });

  it('is merged with two positions five minutes apart (no arc length is asked of an update)', () => {
    const { intake } = setup();
    const observations = [position('2027-03-04T05:40:00Z'), position('2027-03-04T05:45:00Z', 151.2605)];
    const [r] = intake.ingestJson(JSON.stringify(exampleNotice({ noticeId: 'ex-0002', observations })), 'test');
    expect(r).toMatchObject({ status: 'accepted', observationsAdded: 2 });
  });

  it('still needs its positions in time order and not in the future', () => {
    const { intake } = setup();
    const observations = [position('2027-03-04T05:45:00Z'), position('2027-03-04T05:40:00Z')];
    const [r] = intake.ingestJson(JSON.stringify(exampleNotice({ noticeId: 'ex-0002', observations })), 'test');
    expect(r).toMatchObject({ status: 'rejected', reasons: [{ path: 'observations[1].t' }] });
    const [late] = intake.ingestJson(JSON.stringify(exampleNotice({ noticeId: 'ex-0003', observations: [position('2027-03-04T07:00:00Z')] })), 'test');
    expect(late).toMatchObject({ status: 'rejected', reasons: [{ path: 'observations[0].t' }] });
  });
});

describe('a notice for an object the sender has not reported', () => {
  it('needs a real tracklet: one position of a new object is refused', () => {
    const { intake } = setup();
    const [r] = intake.ingestJson(JSON.stringify(exampleNotice({ noticeId: 'n-1', objectId: 'ZX27A09', observations: [position('2027-03-04T05:40:00Z')] })), 'test');
    expect(r).toMatchObject({ status: 'rejected', reasons: [{ path: 'observations', message: 'expected at least 2 observations (or an orbit block), got 1' }] });
  });

  it("needs a real tracklet from another sender too, even under the same designation", () => {
    const { intake } = setup();
    const notice = exampleNotice({ noticeId: 'o-1', sender: 'Another Survey (invented)', observations: [position('2027-03-04T05:40:00Z')] });
    expect(intake.ingestJson(JSON.stringify(notice), 'test')[0]).toMatchObject({ status: 'rejected' });
  });
});
