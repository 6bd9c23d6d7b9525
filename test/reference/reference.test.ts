import { BaryState, Body, Equator, Observer, SetDeltaTFunction } from 'astronomy-engine';
import { describe, expect, it } from 'vitest';
import { integrate, Trajectory } from './integrator.js';
import { placeOf } from './observe.js';
import { referenceAstroTime, ttDaysOfUtc, ttMinusUtcSeconds } from './reference-time.js';
import { earthState, KM_PER_AU } from './solar-system.js';
import { referencePlacesFrom, type ReferenceCase, type ReferenceTruthPoint } from './cases.js';
import { loadFixture } from './fixture.js';
import { linearNoiseFloor, seedOfCase, tangentOffsetArcsec } from './sky-geometry.js';
import { meanVMagnitude } from './photometry.js';
import { heliocentricStateOf } from './kepler.js';

/**
 * Checks of the reference generator itself (test/reference/), against
 * astronomy-engine directly and published values, before it is trusted to
 * judge the estimator.
 */
const SITE = { name: 'test site (invented)', latDeg: -26.4, lonDeg: 133.8, heightM: 600 };
const START_MS = Date.UTC(2027, 4, 10, 12);

/** A close approacher: 0.002 au from the Earth's centre at START_MS, 9 km/s relative. */
function closeApproacher(): { tt: number; state: Float64Array } {
  const tt = ttDaysOfUtc(START_MS);
  const e = earthState(tt);
  const v = (9 * 86_400) / KM_PER_AU;
  return { tt, state: Float64Array.from([e.r[0] + 0.002, e.r[1], e.r[2], e.v[0], e.v[1] + v, e.v[2]]) };
}

describe('reference time scales', () => {
  it('takes TT - UTC as 32.184 s + 37 leap seconds from 2017 (IERS Bulletin C)', () => {
    expect(ttMinusUtcSeconds(Date.UTC(2027, 0, 1))).toBeCloseTo(69.184, 9);
  });

  it('refuses dates outside the leap-second count it knows', () => {
    expect(() => ttMinusUtcSeconds(Date.UTC(2016, 11, 31))).toThrow(/leap-second/);
    expect(() => ttMinusUtcSeconds(Date.UTC(2030, 0, 1))).toThrow(/leap-second/);
  });

  it('gives astronomy-engine times with ut = UTC and tt = UTC + 69.184 s', () => {
    const t = referenceAstroTime(START_MS);
    expect((t.tt - t.ut) * 86_400).toBeCloseTo(69.184, 6);
  });
});

describe('reference integrator', () => {
  it('moves a 0.002 au pass by less than 1 m (0.0007 arcsec from the Earth) over 3 days when the tolerance is tightened 100 times and the longest step quartered (step-halving evidence)', () => {
    const { tt, state } = closeApproacher();
    const coarse = integrate(tt - 1.5, new Trajectory(tt, state).stateAt(tt - 1.5), tt + 1.5, { tolAu: 1e-13, maxStepDays: 1 }).y;
    const fine = integrate(tt - 1.5, new Trajectory(tt, state, { tolAu: 1e-15, maxStepDays: 0.25 }).stateAt(tt - 1.5), tt + 1.5, { tolAu: 1e-15, maxStepDays: 0.25 }).y;
    const differenceKm = Math.hypot(coarse[0]! - fine[0]!, coarse[1]! - fine[1]!, coarse[2]! - fine[2]!) * KM_PER_AU;
    expect(differenceKm).toBeLessThan(1e-3);
  });

  it('returns to its start after 10 days forward and back to within 1 m', () => {
    const { tt, state } = closeApproacher();
    const there = integrate(tt, state, tt + 10, { tolAu: 1e-13, maxStepDays: 1 }).y;
    const back = integrate(tt + 10, there, tt, { tolAu: 1e-13, maxStepDays: 1 }).y;
    expect(Math.hypot(back[0]! - state[0]!, back[1]! - state[1]!, back[2]! - state[2]!) * KM_PER_AU * 1000).toBeLessThan(1);
  });
});

describe('reference places', () => {
  it("puts Mars where astronomy-engine's astrometric Equator does, within 0.01 arcsec", () => {
    // astronomy-engine's light-time loop makes its own times from UT, so it must run on the same TT - UT here (this file only).
    SetDeltaTFunction(() => 69.184);
    // A "trajectory" that is astronomy-engine's own barycentric Mars: the light time and the observer are the reference's.
    const mars = { stateAt: (tt: number) => { const s = BaryState(Body.Mars, referenceAstroTime(Date.UTC(2000, 0, 1, 12) + tt * 86_400_000 - 69_184)); return [s.x, s.y, s.z]; } };
    for (const ms of [START_MS, START_MS + 40 * 86_400_000]) {
      const ours = placeOf(mars, SITE, ms);
      const eq = Equator(Body.Mars, referenceAstroTime(ms), new Observer(SITE.latDeg, SITE.lonDeg, SITE.heightM), false, false);
      const [dx, dy] = tangentOffsetArcsec(eq.ra * 15, eq.dec, ours.raDeg, ours.decDeg);
      expect(Math.hypot(dx, dy)).toBeLessThan(0.01);
      expect(ours.deltaAu).toBeCloseTo(eq.dist, 7);
    }
  });
});

describe('reference photometry and elements', () => {
  it('gives V = H + 5 log10(r Delta) at zero phase and 1.00 mag of fading at 20 deg for G = 0.15 (Bowell et al. 1989)', () => {
    expect(meanVMagnitude(20, 0.15, 2, 1, 0)).toBeCloseTo(20 + 5 * Math.log10(2), 9);
    expect(meanVMagnitude(20, 0.15, 1, 1, 20) - 20).toBeCloseTo(1.0, 2);
  });

  it('places a circular orbit at its radius with the circular speed (two-body check)', () => {
    const gm = 0.01720209895 ** 2;
    const s = heliocentricStateOf({ aAu: 2.5, e: 0, iDeg: 10, nodeDeg: 30, periDeg: 40, meanAnomalyDeg: 50 }, gm);
    expect(Math.hypot(s[0]!, s[1]!, s[2]!)).toBeCloseTo(2.5, 12);
    expect(Math.hypot(s[3]!, s[4]!, s[5]!)).toBeCloseTo(Math.sqrt(gm / 2.5), 12);
  });
});

describe('the error floor of a prediction from positions alone', () => {
  /**
   * For slow movers (the ordinary population, where the floor decides the
   * +24 h goal) the floor must be the straight-line fit of the noise itself,
   * carried to +24 h: the linear propagation of a least-squares fit's errors
   * (Bevington & Robinson, Data Reduction and Error Analysis, ch. 6), here
   * computed from the offsets of each noisy position from its exact place.
   */
  it('equals the line fit of the positions noise carried to +24 h, within 0.1 %, for the ordinary cases', () => {
    for (const c of loadFixture().filter((x) => x.population === 'ordinary')) {
      const hours = c.observations.map((o) => Date.parse(o.t) / 3_600_000);
      const exact = referencePlacesFrom(c.population, seedOfCase(c), c.observations[0]!.site, c.observations.map((o) => Date.parse(o.t)));
      const noise = c.observations.map((o, k) => tangentOffsetArcsec(exact[k]!.raDeg, exact[k]!.decDeg, o.raDeg, o.decDeg));
      const mean = hours.reduce((s, x) => s + x, 0) / hours.length;
      const stt = hours.reduce((s, x) => s + (x - mean) ** 2, 0);
      const at = (p: ReferenceTruthPoint) => p.utcMs / 3_600_000;
      const line = (axis: 0 | 1, t: number) => {
        const m = noise.reduce((s, d) => s + d[axis], 0) / noise.length;
        return m + (noise.reduce((s, d, k) => s + (hours[k]! - mean) * (d[axis] - m), 0) / stt) * (t - mean);
      };
      const point = c.truth.find((p) => p.site === 'followUp' && p.hours === 24)!;
      const expected = Math.hypot(line(0, at(point)), line(1, at(point)));
      expect(Math.abs(linearNoiseFloor(c)(point) - expected)).toBeLessThan(0.001 * expected);
    }
  });

  it('is zero (to 1 mas) for a tracklet whose positions carry no noise', () => {
    const c = loadFixture()[0]!;
    const exact = referencePlacesFrom(c.population, seedOfCase(c), c.observations[0]!.site, c.observations.map((o) => Date.parse(o.t)));
    const noiseless: ReferenceCase = { ...c, observations: c.observations.map((o, k) => ({ ...o, raDeg: exact[k]!.raDeg, decDeg: exact[k]!.decDeg })) };
    expect(linearNoiseFloor(noiseless)(c.truth.find((p) => p.hours === 24)!)).toBeLessThan(0.001);
  });
});
