/**
 * Sky geometry of the reference scorer, and the floor of the +24 h error: the
 * formulas of this folder, importing nothing from src/
 * (test/orbit/estimation/reference-scorer.ts scores the estimator with them).
 */
import { referencePlacesFrom, type ReferenceCase, type ReferencePopulation, type ReferenceTruthPoint } from './cases.js';

const RAD = Math.PI / 180;
const ARCSEC = 206_264.806_247;

/** Offset of `to` from `from` on the tangent plane of `from` (gnomonic), arcsec east and north. */
export function tangentOffsetArcsec(fromRaDeg: number, fromDecDeg: number, toRaDeg: number, toDecDeg: number): [number, number] {
  const a0 = fromRaDeg * RAD, d0 = fromDecDeg * RAD, a = toRaDeg * RAD, d = toDecDeg * RAD;
  const cosc = Math.sin(d0) * Math.sin(d) + Math.cos(d0) * Math.cos(d) * Math.cos(a - a0);
  const x = (Math.cos(d) * Math.sin(a - a0)) / cosc;
  const y = (Math.cos(d0) * Math.sin(d) - Math.sin(d0) * Math.cos(d) * Math.cos(a - a0)) / cosc;
  return [x * ARCSEC, y * ARCSEC];
}

/** Angular separation, arcsec (haversine form). */
export function separationArcsec(ra1Deg: number, dec1Deg: number, ra2Deg: number, dec2Deg: number): number {
  const s = Math.sin(((dec2Deg - dec1Deg) * RAD) / 2) ** 2 + Math.cos(dec1Deg * RAD) * Math.cos(dec2Deg * RAD) * Math.sin(((ra2Deg - ra1Deg) * RAD) / 2) ** 2;
  return 2 * Math.asin(Math.min(1, Math.sqrt(s))) * ARCSEC;
}

/** Distance in sigma of an offset (east, north) from the centre of an ellipse (1-sigma axes, pa east of north of the major axis). */
export function sigmaDistance(ellipse: { major: number; minor: number; pa: number }, east: number, north: number): number {
  const pa = ellipse.pa * RAD;
  const u = east * Math.sin(pa) + north * Math.cos(pa);
  const v = east * Math.cos(pa) - north * Math.sin(pa);
  return Math.hypot(u / Math.max(ellipse.major, 1e-9), v / Math.max(ellipse.minor, 1e-9));
}

/**
 * Linear extrapolation of a tracklet: the weighted least-squares line through
 * its positions on the gnomonic plane at the first position, in time,
 * carried to `utcMs` (a straight line on that plane is a great circle).
 */
export function linearExtrapolation(c: ReferenceCase, utcMs: number): { raDeg: number; decDeg: number } {
  const o0 = c.observations[0]!;
  const pts = c.observations.map((o) => ({ t: (Date.parse(o.t) - Date.parse(o0.t)) / 3_600_000, xy: tangentOffsetArcsec(o0.raDeg, o0.decDeg, o.raDeg, o.decDeg), w: 1 / o.sigmaArcsec ** 2 }));
  const sw = pts.reduce((s, p) => s + p.w, 0);
  const tm = pts.reduce((s, p) => s + p.w * p.t, 0) / sw;
  const stt = pts.reduce((s, p) => s + p.w * (p.t - tm) ** 2, 0);
  const fit = (k: 0 | 1) => {
    const m = pts.reduce((s, p) => s + p.w * p.xy[k], 0) / sw;
    const slope = pts.reduce((s, p) => s + p.w * (p.t - tm) * (p.xy[k] - m), 0) / stt;
    return m + slope * ((utcMs - Date.parse(o0.t)) / 3_600_000 - tm);
  };
  const x = fit(0) / ARCSEC, y = fit(1) / ARCSEC;
  const a0 = o0.raDeg * RAD, d0 = o0.decDeg * RAD;
  const rho = Math.hypot(x, y), c0 = Math.atan(rho);
  const dec = rho === 0 ? d0 : Math.asin(Math.cos(c0) * Math.sin(d0) + (y * Math.sin(c0) * Math.cos(d0)) / rho);
  const ra = a0 + Math.atan2(x * Math.sin(c0), rho * Math.cos(d0) * Math.cos(c0) - y * Math.sin(d0) * Math.sin(c0));
  return { raDeg: ((ra / RAD) % 360 + 360) % 360, decDeg: dec / RAD };
}

/** The seed a case was drawn from (its id is population-seed). */
export function seedOfCase(c: ReferenceCase): number {
  const seed = Number(c.id.slice(c.id.lastIndexOf('-') + 1));
  if (!Number.isInteger(seed)) throw new RangeError(`case id ${c.id}: expected <population>-<seed>`);
  return seed;
}

/**
 * The error floor of any estimator that knows nothing of an object's motion
 * beyond the tracklet's positions (arcsec): the offset between the linear
 * extrapolation of the noisy positions and that of the same positions without
 * their noise (from this folder's integration of the truth).
 *
 * Why it is a floor: with the range and range rate known exactly, an orbit is
 * fixed by the position and angular rate on the sky, which enter the
 * positions linearly over a short arc; their least-squares errors are then
 * those of the straight-line fit (the curvature is known and drops out), and
 * they carry into the prediction as the line's errors do (the linear
 * propagation of errors of a weighted least-squares fit, e.g. Bevington &
 * Robinson, Data Reduction and Error Analysis, ch. 6). Knowing less (the
 * range) cannot make the prediction better; only a prior on the direction or
 * speed of motion could, and the estimator has none.
 */
export function linearNoiseFloor(c: ReferenceCase): (truth: ReferenceTruthPoint) => number {
  const population: ReferencePopulation = c.population;
  const clean = referencePlacesFrom(population, seedOfCase(c), c.observations[0]!.site, c.observations.map((o) => Date.parse(o.t)));
  const noiseless: ReferenceCase = { ...c, observations: c.observations.map((o, k) => ({ ...o, raDeg: clean[k]!.raDeg, decDeg: clean[k]!.decDeg })) };
  return (truth) => {
    const noisy = linearExtrapolation(c, truth.utcMs), exact = linearExtrapolation(noiseless, truth.utcMs);
    return separationArcsec(noisy.raDeg, noisy.decDeg, exact.raDeg, exact.decDeg);
  };
}
