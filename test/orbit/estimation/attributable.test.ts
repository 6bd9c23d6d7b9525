import { describe, expect, it } from 'vitest';
import { EstimationInputError, fitAttributable, prepareObservations } from '../../../src/orbit/estimation/index.js';
import type { TrackletObservation } from '../../../src/domain/tracklet.js';

const SITE = { latDeg: 23.4, lonDeg: 45.2, heightM: 1800 }; // invented survey site
const T0 = Date.parse('2027-05-10T21:00:00Z');
const DEG = Math.PI / 180;
const ARCSEC = 180 / Math.PI * 3600;

type V = [number, number, number];
const cross = (a: V, b: V): V => [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]];
const unit = (a: V): V => { const n = Math.hypot(...a); return [a[0] / n, a[1] / n, a[2] / n]; };

/**
 * Points on a great circle traversed at a uniform rate (spherical geometry, no
 * model): u(t) = cos(w t) a + sin(w t) b with a, b orthonormal. The analytic
 * rates at t are the velocity w (-sin a + cos b) on the local east and north.
 */
function greatCircle(raDeg: number, decDeg: number, paDeg: number, rateArcsecPerS: number, minutes: number[]) {
  const ra = raDeg * DEG, dec = decDeg * DEG, pa = paDeg * DEG;
  const a: V = [Math.cos(dec) * Math.cos(ra), Math.cos(dec) * Math.sin(ra), Math.sin(dec)];
  const east = unit([-a[1], a[0], 0]);
  const north = cross(a, east);
  const b: V = [0, 1, 2].map((k) => Math.sin(pa) * east[k]! + Math.cos(pa) * north[k]!) as V;
  const w = rateArcsecPerS / ARCSEC; // rad/s
  const at = (s: number): V => [0, 1, 2].map((k) => Math.cos(w * s) * a[k]! + Math.sin(w * s) * b[k]!) as V;
  const observations: TrackletObservation[] = minutes.map((m) => {
    const u = at(m * 60);
    const r = Math.atan2(u[1], u[0]);
    return { t: new Date(T0 + m * 60_000).toISOString(), raDeg: ((r / DEG) + 360) % 360, decDeg: Math.asin(u[2]) / DEG, sigmaArcsec: 0.5, mag: null, band: null, observer: SITE };
  });
  const truthAt = (s: number) => {
    const u = at(s);
    const v: V = [0, 1, 2].map((k) => w * (-Math.sin(w * s) * a[k]! + Math.cos(w * s) * b[k]!)) as V;
    const e = unit([-u[1], u[0], 0]);
    const n = cross(u, e);
    return {
      raDeg: ((Math.atan2(u[1], u[0]) / DEG) + 360) % 360,
      decDeg: Math.asin(u[2]) / DEG,
      raRate: (v[0] * e[0] + v[1] * e[1] + v[2] * e[2]) * ARCSEC,
      decRate: (v[0] * n[0] + v[1] * n[1] + v[2] * n[2]) * ARCSEC,
    };
  };
  return { observations, truthAt };
}

describe('attributable fit', () => {
  it('reproduces the rates of a noise-free great circle exactly (analytic spherical geometry, to 1e-9 arcsec/s)', () => {
    const minutes = [0, 17, 31, 52, 70];
    const { observations, truthAt } = greatCircle(151.2, -12.3, 63, 0.85, minutes);
    const fit = fitAttributable(prepareObservations(observations));
    const meanS = (minutes.reduce((s, m) => s + m, 0) / minutes.length) * 60;
    const truth = truthAt(meanS);
    expect(fit.raRateArcsecPerS).toBeCloseTo(truth.raRate, 9);
    expect(fit.decRateArcsecPerS).toBeCloseTo(truth.decRate, 9);
    expect(Math.abs(fit.raDeg - truth.raDeg) * 3600 * Math.cos(truth.decDeg * DEG)).toBeLessThan(1e-6);
    expect(Math.abs(fit.decDeg - truth.decDeg) * 3600).toBeLessThan(1e-6);
    expect(fit.chiSquare).toBeLessThan(1e-12);
    expect(fit.accelerationArcsecPerH2).toBeNull();
  });

  it('keeps the exact rates near the pole, where RA changes fast (analytic, to 1e-9 arcsec/s)', () => {
    const { observations, truthAt } = greatCircle(10, 89.5, 100, 2.5, [0, 10, 20, 30, 40, 50]);
    const fit = fitAttributable(prepareObservations(observations));
    const truth = truthAt(25 * 60);
    expect(fit.raRateArcsecPerS).toBeCloseTo(truth.raRate, 9);
    expect(fit.decRateArcsecPerS).toBeCloseTo(truth.decRate, 9);
  });

  it('gives the covariance of a straight-line fit: sigma(rate) = sigma / sqrt(sum (t - mean)^2) (weighted least squares, textbook)', () => {
    const minutes = [0, 20, 40, 60];
    const { observations } = greatCircle(200, 5, 90, 0.3, minutes);
    const fit = fitAttributable(prepareObservations(observations));
    const days = minutes.map((m) => (m - 30) / 1440);
    const expected = (0.5 / ARCSEC) / Math.sqrt(days.reduce((s, d) => s + d * d, 0));
    expect(Math.sqrt(fit.covariance[2]![2]!) / expected).toBeCloseTo(1, 9);
    expect(Math.sqrt(fit.covariance[0]![0]!) / (0.5 / ARCSEC / 2)).toBeCloseTo(1, 9);
  });

  it('flags a position 30 arcsec off the line of the others as an outlier and leaves the rest', () => {
    const { observations } = greatCircle(120, 20, 45, 0.5, [0, 12, 24, 36, 48, 60]);
    const shifted = observations.map((o, i) => (i === 3 ? { ...o, decDeg: o.decDeg + 30 / 3600 } : o));
    const fit = fitAttributable(prepareObservations(shifted));
    expect(fit.residuals.map((r) => r.outlier)).toEqual([false, false, false, true, false, false]);
    expect(fit.residuals[3]!.dDecArcsec).toBeGreaterThan(29);
    expect(fit.chiSquare).toBeLessThan(1e-9);
  });

  it('does not flag anything in a tracklet with 1-sigma noise only', () => {
    const { observations } = greatCircle(120, 20, 45, 0.5, [0, 12, 24, 36, 48, 60]);
    const jitter = [0.3, -0.5, 0.4, 0.2, -0.6, 0.1];
    const noisy = observations.map((o, i) => ({ ...o, decDeg: o.decDeg + (jitter[i]! * 0.5) / 3600 }));
    expect(fitAttributable(prepareObservations(noisy)).residuals.some((r) => r.outlier)).toBe(false);
  });

  it('fits two observations exactly, with no degrees of freedom left', () => {
    const { observations } = greatCircle(300, -40, 10, 1.2, [0, 30]);
    const fit = fitAttributable(prepareObservations(observations));
    expect(fit.degreesOfFreedom).toBe(0);
    expect(fit.chiSquare).toBeLessThan(1e-12);
  });
});

describe('degenerate tracklets', () => {
  const { observations } = greatCircle(100, 10, 30, 0.4, [0, 20, 40, 60]);

  it('refuses observations that all share one time', () => {
    const same = observations.map((o) => ({ ...o, t: observations[0]!.t }));
    expect(() => prepareObservations(same)).toThrow(EstimationInputError);
    expect(() => prepareObservations(same)).toThrow(/same time/);
  });

  it('refuses observations that all have the same position', () => {
    const still = observations.map((o) => ({ ...o, raDeg: 100, decDeg: 10 }));
    expect(() => prepareObservations(still)).toThrow(/same position/);
  });

  it('names a NaN coordinate', () => {
    const bad = observations.map((o, i) => (i === 2 ? { ...o, raDeg: Number.NaN } : o));
    expect(() => prepareObservations(bad)).toThrow('observations[2].raDeg = NaN: expected a finite number');
  });

  it('names a sigma that is not positive', () => {
    const bad = observations.map((o, i) => (i === 1 ? { ...o, sigmaArcsec: 0 } : o));
    expect(() => prepareObservations(bad)).toThrow(/observations\[1\]\.sigmaArcsec/);
  });

  it('refuses a single observation', () => {
    expect(() => prepareObservations(observations.slice(0, 1))).toThrow(/at least 2 observations/);
  });
});
