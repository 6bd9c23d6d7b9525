import { describe, expect, it } from 'vitest';
import { ensemblePlaces } from '../../../src/orbit/ephemeris.js';
import { ttFromUtc } from '../../../src/orbit/time.js';
import { Trajectory } from '../../reference/integrator.js';
import { placeOf } from '../../reference/observe.js';
import { ttDaysOfUtc } from '../../reference/reference-time.js';
import { earthState, KM_PER_AU, sunState } from '../../reference/solar-system.js';
import { tangentOffsetArcsec } from '../../reference/sky-geometry.js';

/**
 * The project's propagation and places against the independent reference
 * generator (test/reference/: its own Bulirsch-Stoer over barycentric point
 * masses, its own light time and time scale): a state the reference builds is
 * handed to the project's ensemblePlaces as a heliocentric state, and both
 * place it from an invented site over a day. Agreement here means the
 * calibration bench measures the estimation, not a mismatch of models.
 */
const SITE = { name: 'test site (invented)', latDeg: -26.4, lonDeg: 133.8, heightM: 600 };
const START_MS = Date.UTC(2026, 10, 20, 14);

function differenceArcsec(distanceAu: number): number {
  const tt = ttDaysOfUtc(START_MS);
  const e = earthState(tt), s = sunState(tt);
  const v = (9 * 86_400) / KM_PER_AU;
  const bary = Float64Array.from([e.r[0] + distanceAu, e.r[1] + 0.3 * distanceAu, e.r[2], e.v[0] + 0.2 * v, e.v[1] + v, e.v[2] - 0.3 * v]);
  const truth = new Trajectory(tt, bary);
  const helio = { tt: ttFromUtc(new Date(START_MS)), x: bary[0]! - s.r[0], y: bary[1]! - s.r[1], z: bary[2]! - s.r[2], vx: bary[3]! - s.v[0], vy: bary[4]! - s.v[1], vz: bary[5]! - s.v[2] };
  const times = [0, 1, 6, 24].map((h) => START_MS + h * 3_600_000);
  const ours = ensemblePlaces([helio], { latDeg: SITE.latDeg, lonDeg: SITE.lonDeg, heightM: SITE.heightM }, times.map((t) => new Date(t)));
  return Math.max(...times.map((t, k) => {
    const ref = placeOf(truth, SITE, t);
    const [x, y] = tangentOffsetArcsec(ref.raDeg, ref.decDeg, ours.raDeg[k]!, ours.decDeg[k]!);
    return Math.hypot(x, y);
  }));
}

describe('the project against the reference generator', () => {
  it('uses the same TT - UTC (69.184 s in 2026)', () => {
    expect((ttFromUtc(new Date(START_MS)) - ttDaysOfUtc(START_MS)) * 86_400).toBeCloseTo(0, 6);
  });

  it.each([[0.5, 0.001], [0.04, 0.01], [0.002, 0.05]])('places an object %f au away within %f arcsec of the reference over a day', (distanceAu, tolerance) => {
    expect(differenceArcsec(distanceAu)).toBeLessThan(tolerance);
  });
});
