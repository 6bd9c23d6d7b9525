import { describe, expect, it } from 'vitest';
import { EstimationInputError, estimateObject } from '../../../src/orbit/estimation/index.js';
import { ellipseDistanceSquared, offsetArcsec } from '../../../src/orbit/estimation/sky-spread.js';
import { ephemerisFromElements } from '../../../src/orbit/ephemeris.js';
import { ttFromTtIso } from '../../../src/orbit/time.js';
import { KM_PER_AU } from '../../../src/orbit/constants.js';
import { REFERENCE_FOLLOW_UP_SITE, referenceCase, type ReferenceCase, type ReferencePopulation } from '../../reference/cases.js';
import { trackletOf } from './reference-scorer.js';

/** A reference case (test/reference/, independent truth) by its id, with its tracklet as the estimator takes it. */
function reference(population: ReferencePopulation, seed: number): ReferenceCase & { tracklet: ReturnType<typeof trackletOf> } {
  const c = referenceCase(population, seed);
  if (!c) throw new Error(`${population}-${seed}: no observable reference case`);
  return { ...c, tracklet: trackletOf(c) };
}
const FOLLOW_UP_SITE = { latDeg: REFERENCE_FOLLOW_UP_SITE.latDeg, lonDeg: REFERENCE_FOLLOW_UP_SITE.lonDeg, heightM: REFERENCE_FOLLOW_UP_SITE.heightM };
const truthAt = (c: ReferenceCase, hours: number) => c.truth.find((t) => t.site === 'followUp' && t.hours === hours)!;

/** A slow encounter 0.0156 au away, six positions over 89 min (its changing parallax shows). */
const close6 = reference('slow', 8);
const MEMBERS = 300;

describe('estimateObject from a tracklet', () => {
  const estimate = estimateObject({ objectId: close6.id, observations: close6.tracklet, now: new Date(close6.lastObservationMs), members: MEMBERS, seed: 7 });

  it('recovers the distance of a close object whose 6-position arc shows its parallax (reference truth inside 5-95 %, median within 25 %)', () => {
    const { p5, p50, p95 } = estimate.summary.rangeAu;
    expect(Math.abs(p50 / close6.meanEpochRangeAu - 1)).toBeLessThan(0.25);
    expect(p5).toBeLessThanOrEqual(close6.meanEpochRangeAu);
    expect(p95).toBeGreaterThanOrEqual(close6.meanEpochRangeAu);
    expect(p95 / p5).toBeLessThan(3);
  });

  it('says in its notes which range prior it used', () => {
    expect(estimate.summary.notes.some((n) => n.startsWith('range prior: mixture of the population model'))).toBe(true);
    const powerLaw = estimateObject({ objectId: close6.id, observations: close6.tracklet, now: new Date(close6.lastObservationMs), members: 50, seed: 7, ranging: { rangePrior: 'powerLaw' } });
    expect(powerLaw.summary.notes).toContain('range prior: rho^0.5 power law (less informative)');
  });

  it('is reproducible with a seed and changes with another seed', () => {
    const again = estimateObject({ objectId: close6.id, observations: close6.tracklet, now: new Date(close6.lastObservationMs), members: MEMBERS, seed: 7 });
    const other = estimateObject({ objectId: close6.id, observations: close6.tracklet, now: new Date(close6.lastObservationMs), members: MEMBERS, seed: 8 });
    const t = [new Date(close6.lastObservationMs + 6 * 3_600_000)];
    // Equal to 1e-10 relative: astronomy-engine keeps a nutation cache keyed by time, so the last bits follow the call history.
    expect(again.summary.rangeAu.p50 / estimate.summary.rangeAu.p50).toBeCloseTo(1, 10);
    expect(again.summary.minGeocentricDistance.au.p50 / estimate.summary.minGeocentricDistance.au.p50).toBeCloseTo(1, 10);
    const [rowAgain, row] = [again.ephemeris(FOLLOW_UP_SITE, t)[0]!, estimate.ephemeris(FOLLOW_UP_SITE, t)[0]!];
    expect(rowAgain.ra).toBeCloseTo(row.ra, 10);
    expect(rowAgain.unc!.major / row.unc!.major).toBeCloseTo(1, 6);
    expect(other.virtualOrbits[0]).not.toEqual(estimate.virtualOrbits[0]);
  });

  it('fills unc and magSigma in every ephemeris row', () => {
    const rows = estimate.ephemeris(FOLLOW_UP_SITE, [1, 12].map((h) => new Date(close6.lastObservationMs + h * 3_600_000)));
    for (const row of rows) {
      expect(row.unc!.major).toBeGreaterThanOrEqual(row.unc!.minor);
      expect(row.unc!.pa).toBeGreaterThanOrEqual(0);
      expect(row.unc!.pa).toBeLessThan(180);
      expect(row.extent99!.major).toBeGreaterThan(row.unc!.major);
      expect(row.magSigma).toBeGreaterThan(0);
      expect(row.mag).not.toBeNull();
    }
    expect(rows[1]!.unc!.major).toBeGreaterThan(rows[0]!.unc!.major);
  });

  it('states the summary consistently: class fractions sum to 1, lunar distances = au x 149597870.7 / 384400, diameter by D = 1329 km / sqrt(p) 10^(-H/5)', () => {
    const s = estimate.summary;
    expect(s.method).toBe('ranging');
    expect(s.members).toBe(MEMBERS);
    expect(s.classFractions.neo + s.classFractions.mainBelt + s.classFractions.other).toBeCloseTo(1, 12);
    expect(s.minGeocentricDistance.lunarDistances.p50).toBeCloseTo((s.minGeocentricDistance.au.p50 * KM_PER_AU) / 384_400, 9);
    const h = s.hMag!.p50;
    expect(s.diameterM!.max).toBeCloseTo((1329e3 / Math.sqrt(0.05)) * 10 ** (-h / 5), 6);
    expect(s.diameterM!.min).toBeCloseTo((1329e3 / Math.sqrt(0.25)) * 10 ** (-h / 5), 6);
    expect(s.residuals).toHaveLength(close6.tracklet.length);
    expect(s.rmsArcsec).toBeLessThan(3 * close6.tracklet[0]!.sigmaArcsec);
  });

  it('flags a close approach when the median minimum distance is under 0.05 au, and the minimum is no farther than the object is now', () => {
    const d = estimate.summary.minGeocentricDistance;
    expect(estimate.summary.closeApproach).toBe(d.au.p50 < 0.05);
    expect(estimate.summary.closeApproach).toBe(true);
    expect(d.au.p5).toBeLessThanOrEqual(d.au.p50);
    expect(d.au.p50).toBeLessThanOrEqual(d.au.p95);
    // Within 10 days the closest point cannot be farther than the distance at the start (plus an Earth radius, 4.3e-5 au, site to centre).
    expect(d.au.p95).toBeLessThan(estimate.summary.rangeAu.p95 * 1.1 + 4.3e-5);
  });
});

describe('honest uncertainty from little data', () => {
  // A slow encounter 0.018 au away with five positions over 112 min.
  const c = reference('slow', 11);
  // Tonight's horizons: at +24 h and more a close object's two-position cloud spans tens of degrees and the
  // prior decides whether a close truth falls inside (docs/accuracy.md, "two positions").
  const times = [1, 3].map((h) => new Date(c.lastObservationMs + h * 3_600_000));
  const full = estimateObject({ objectId: c.id, observations: c.tracklet, now: new Date(c.lastObservationMs), members: MEMBERS, seed: 3 });
  const ends = [c.tracklet[0]!, c.tracklet[c.tracklet.length - 1]!];
  const two = estimateObject({ objectId: c.id, observations: ends, now: new Date(c.lastObservationMs), members: MEMBERS, seed: 3 });

  it('a two-observation notice gets a larger ellipse than the full tracklet, and the truth is still inside 3 sigma', () => {
    const rowsTwo = two.ephemeris(FOLLOW_UP_SITE, times);
    const rowsFull = full.ephemeris(FOLLOW_UP_SITE, times);
    rowsTwo.forEach((row, k) => {
      expect(row.unc!.major).toBeGreaterThan(rowsFull[k]!.unc!.major);
      const truth = truthAt(c, [1, 3][k]!);
      const [e, n] = offsetArcsec(row.ra, row.dec, truth.raDeg, truth.decDeg);
      expect(Math.sqrt(ellipseDistanceSquared(row.unc!, e, n))).toBeLessThan(3);
    });
    expect(two.summary.notes.join(' ')).toMatch(/no redundancy/);
  });
});

describe('estimateObject with an orbit block', () => {
  const orbit = { epoch: '2027-05-10T00:00:00Z', q: 0.92, e: 0.31, i: 7.5, node: 120.5, peri: 250.25, tp: '2027-04-20T06:00:00Z', H: 22.1, G: 0.25 };
  const estimate = estimateObject({ objectId: 'ZQ0042', observations: [], orbit, now: new Date('2027-05-10T00:00:00Z'), members: 200, seed: 1 });

  it('uses the block as the nominal: rows agree with the orbit module\'s ephemeris of the same elements (0.001 arcsec)', () => {
    const times = [new Date('2027-05-10T06:00:00Z'), new Date('2027-05-11T06:00:00Z')];
    const rows = estimate.ephemeris(FOLLOW_UP_SITE, times);
    const reference = ephemerisFromElements(
      { qAu: orbit.q, e: orbit.e, iDeg: orbit.i, nodeDeg: orbit.node, periDeg: orbit.peri, tpTt: ttFromTtIso('tp', orbit.tp) },
      ttFromTtIso('epoch', orbit.epoch),
      FOLLOW_UP_SITE,
      times,
      { photometry: { hMag: 22.1, g: 0.25 } },
    );
    rows.forEach((row, k) => {
      const [e, n] = offsetArcsec(reference[k]!.ra, reference[k]!.dec, row.ra, row.dec);
      expect(Math.hypot(e, n)).toBeLessThan(1e-3);
      expect(row.mag).toBeCloseTo(reference[k]!.mag!, 6);
      expect(row.unc!.major).toBeGreaterThan(0);
    });
    expect(estimate.summary.method).toBe('orbit-block');
    expect(estimate.summary.hMag).toEqual({ p5: 22.1, p50: 22.1, p95: 22.1 });
    expect(estimate.summary.classFractions.neo).toBe(1);
  });
});

describe('bad input to estimateObject', () => {
  // A near-Earth orbit seen from 1.9 au, four positions.
  const c = reference('ordinary', 5);
  const base = { objectId: c.id, now: new Date(c.lastObservationMs), members: 50 };

  it('refuses identical times with a message, not NaN', () => {
    const same = c.tracklet.map((o) => ({ ...o, t: c.tracklet[0]!.t }));
    expect(() => estimateObject({ ...base, observations: same })).toThrow(EstimationInputError);
  });

  it('refuses all-equal positions', () => {
    const still = c.tracklet.map((o) => ({ ...o, raDeg: 10, decDeg: 5 }));
    expect(() => estimateObject({ ...base, observations: still })).toThrow(/same position/);
  });

  it('refuses a NaN declination and names it', () => {
    const bad = c.tracklet.map((o, i) => (i === 1 ? { ...o, decDeg: Number.NaN } : o));
    expect(() => estimateObject({ ...base, observations: bad })).toThrow('observations[1].decDeg = NaN: expected a finite number');
  });

  it('refuses a member count that is not a whole number from 10 to 100000', () => {
    expect(() => estimateObject({ ...base, observations: c.tracklet, members: 2.5 })).toThrow(/members = 2.5/);
  });

  it('refuses an invalid clock', () => {
    expect(() => estimateObject({ ...base, observations: c.tracklet, now: new Date(Number.NaN) })).toThrow(/now/);
  });
});

describe('an orbit block with an unusable tracklet', () => {
  it('still answers from the orbit block and says why the tracklet was not used', () => {
    const orbit = { epoch: '2027-05-10T00:00:00Z', q: 2.4, e: 0.1, i: 5, node: 40, peri: 80, tp: '2027-01-20T00:00:00Z' };
    const site = { latDeg: 23.4, lonDeg: 45.2, heightM: 1800 };
    const one = [{ t: '2027-05-10T01:00:00Z', raDeg: 200, decDeg: -10, sigmaArcsec: 0.5, mag: 19, band: 'V', observer: site }];
    const estimate = estimateObject({ objectId: 'ZQ0043', observations: one, orbit, now: new Date('2027-05-10T02:00:00Z'), members: 50 });
    expect(estimate.summary.method).toBe('orbit-block');
    expect(estimate.summary.notes.join(' ')).toMatch(/tracklet not used: observations = 1/);
    expect(estimate.summary.classFractions.mainBelt).toBe(1);
  });
});
