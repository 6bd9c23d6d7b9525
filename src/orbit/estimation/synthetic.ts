import { AstroTime, Body, HelioState, MakeTime, MassProduct } from 'astronomy-engine';
import type { GeodeticLocation } from '../../config/schema.js';
import { apparentInFrame, siteFrameAt } from '../../sky/site.js';
import { apparentMagnitudeHG } from '../../photometry/magnitudes.js';
import { ARCSEC_PER_RAD, DEG_PER_RAD, GM_SUN_AU3_PER_DAY2, KM_PER_AU, RAD_PER_DEG, SECONDS_PER_DAY } from '../constants.js';
import { stateFromPerihelionElements, type HeliocentricState } from '../elements.js';
import { astrometricPlace, observerGeometry } from '../ephemeris.js';
import type { TrackletObservation } from '../estimate-types.js';
import { ttFromUtc, utcFromTt } from '../time.js';
import { extrapolateAttributable } from './attributable.js';
import { estimateObject } from './estimate.js';
import { createRandom, type RandomSource } from './random.js';
import type { RangingOptions } from './ranging.js';
import { ellipseDistanceSquared, offsetArcsec } from './sky-spread.js';
import { raDecFromVector, tangentFrame, unitFromRaDec, unproject } from './tangent.js';

/**
 * Calibration generator (invented data, for tests and benchmarks only): known
 * orbits, integrated independently of src/orbit/propagate.ts by a fixed-step
 * classical RK4 (Press et al., Numerical Recipes, 3rd ed., sect. 17.1) whose
 * perturber positions are taken from astronomy-engine at every stage (no
 * table, no interpolation): Sun, Venus, Earth, Moon, Mars, Jupiter, Saturn,
 * heliocentric with the indirect term. Steps of 0.001 day (86 s) for close
 * approachers and 0.004 day otherwise. Each truth is observed from an
 * invented survey site as 3-6 positions over 20-120 minutes with Gaussian noise
 * of the stated sigma (0.2-0.8 arcsec), at night with the object above 20 deg,
 * and then predicted from an invented follow-up site at the horizons below,
 * counted from the last observation.
 */

/** Invented survey site (a desert plateau; not a real observatory). */
export const SURVEY_SITE: GeodeticLocation = { latDeg: 23.4, lonDeg: 45.2, heightM: 1800 };
/** Invented follow-up site on another continent. */
export const FOLLOW_UP_SITE: GeodeticLocation = { latDeg: -31.2, lonDeg: 121.6, heightM: 400 };
export const CALIBRATION_HORIZONS_H = [1, 3, 6, 12, 24, 48] as const;

export type CaseKind = 'close' | 'ordinary';

export interface CalibrationCase {
  readonly id: string;
  readonly kind: CaseKind;
  /** Close approachers: the miss distance the truth was built with (au); ordinary: null. */
  readonly missAu: number | null;
  /** Topocentric distance from the survey site at the first observation, au. */
  readonly rangeAu: number;
  /** Topocentric distance from the survey site at the tracklet's mean time, au (what ranging estimates). */
  readonly meanEpochRangeAu: number;
  /** The truth's heliocentric state at the tracklet's mean time (diagnostics). */
  readonly meanEpochState: HeliocentricState;
  readonly observations: TrackletObservation[];
  readonly lastObservationMs: number;
  /** Truth seen from FOLLOW_UP_SITE at each horizon (degrees). */
  readonly truth: readonly { hours: number; timeUtc: Date; raDeg: number; decDeg: number }[];
}

const PERTURBERS = [Body.Venus, Body.Earth, Body.Moon, Body.Mars, Body.Jupiter, Body.Saturn] as const;
/** au^3/day^2 (DE405, via astronomy-engine). */
const MASS = new Map(PERTURBERS.map((body) => [body, MassProduct(body)]));

/** Perturber positions at one time (heliocentric EQJ, au), in PERTURBERS order. */
function perturbersAt(tt: number): number[][] {
  const time = AstroTime.FromTerrestrialTime(tt);
  return PERTURBERS.map((body) => {
    const b = HelioState(body, time);
    return [b.x, b.y, b.z];
  });
}

function acceleration(bodies: readonly number[][], r: readonly number[]): number[] {
  const rn = Math.hypot(r[0]!, r[1]!, r[2]!);
  const a = r.map((x) => (-GM_SUN_AU3_PER_DAY2 * x) / rn ** 3);
  for (let index = 0; index < PERTURBERS.length; index++) {
    const body = PERTURBERS[index]!;
    const p = bodies[index]!;
    const d = [p[0]! - r[0]!, p[1]! - r[1]!, p[2]! - r[2]!];
    const dn = Math.hypot(d[0]!, d[1]!, d[2]!);
    const pn = Math.hypot(p[0]!, p[1]!, p[2]!);
    for (let k = 0; k < 3; k++) a[k] = a[k]! + MASS.get(body)! * (d[k]! / dn ** 3 - p[k]! / pn ** 3);
  }
  return a;
}

/** Fixed-step RK4 of one state to each of `timesTt` (any order); steps of at most `stepDays`, landing on every time. */
export function integrateTruth(state: HeliocentricState, timesTt: readonly number[], stepDays: number): HeliocentricState[] {
  const order = timesTt.map((t, i) => ({ t, i }));
  const out: HeliocentricState[] = new Array(timesTt.length);
  // Each step needs the bodies at t, t + h/2 and t + h; t + h is the next step's t.
  let cachedTt = Number.NaN;
  let cachedBodies: number[][] = [];
  const bodiesAt = (tt: number): number[][] => {
    if (tt !== cachedTt) {
      cachedTt = tt;
      cachedBodies = perturbersAt(tt);
    }
    return cachedBodies;
  };
  for (const run of [order.filter((o) => o.t >= state.tt).sort((a, b) => a.t - b.t), order.filter((o) => o.t < state.tt).sort((a, b) => b.t - a.t)]) {
    let t = state.tt;
    let r = [state.x, state.y, state.z];
    let v = [state.vx, state.vy, state.vz];
    for (const target of run) {
      const span = target.t - t;
      const steps = Math.max(1, Math.ceil(Math.abs(span) / stepDays));
      const h = span / steps;
      for (let s = 0; s < steps && span !== 0; s++) {
        const k1v = acceleration(bodiesAt(t), r), k1r = v;
        const mid = perturbersAt(t + h / 2);
        const r2 = r.map((x, k) => x + (h / 2) * k1r[k]!), v2 = v.map((x, k) => x + (h / 2) * k1v[k]!);
        const k2v = acceleration(mid, r2), k2r = v2;
        const r3 = r.map((x, k) => x + (h / 2) * k2r[k]!), v3 = v.map((x, k) => x + (h / 2) * k2v[k]!);
        const k3v = acceleration(mid, r3), k3r = v3;
        const r4 = r.map((x, k) => x + h * k3r[k]!), v4 = v.map((x, k) => x + h * k3v[k]!);
        const k4v = acceleration(bodiesAt(t + h), r4), k4r = v4;
        r = r.map((x, k) => x + (h / 6) * (k1r[k]! + 2 * k2r[k]! + 2 * k3r[k]! + k4r[k]!));
        v = v.map((x, k) => x + (h / 6) * (k1v[k]! + 2 * k2v[k]! + 2 * k3v[k]! + k4v[k]!));
        t += h;
      }
      t = target.t;
      out[target.i] = { tt: t, x: r[0]!, y: r[1]!, z: r[2]!, vx: v[0]!, vy: v[1]!, vz: v[2]! };
    }
  }
  return out;
}

function randomUnit(random: RandomSource): [number, number, number] {
  const z = 2 * random.uniform() - 1;
  const phi = 2 * Math.PI * random.uniform();
  const s = Math.sqrt(1 - z * z);
  return [s * Math.cos(phi), s * Math.sin(phi), z];
}

/** Altitudes (deg) of a direction and of the Sun from a site at a time. */
function altitudes(site: GeodeticLocation, timeUtc: Date, raDeg: number, decDeg: number): { object: number; sun: number } {
  const frame = siteFrameAt(site, timeUtc);
  const sunVec = HelioState(Body.Earth, MakeTime(timeUtc));
  const sun = raDecFromVector([-sunVec.x, -sunVec.y, -sunVec.z]);
  return {
    object: apparentInFrame(frame, raDeg, decDeg).altDeg,
    sun: apparentInFrame(frame, sun.raRad * DEG_PER_RAD, sun.decRad * DEG_PER_RAD).altDeg,
  };
}

const BASE_EPOCH_MS = Date.UTC(2026, 2, 1);
const MS_PER_DAY = SECONDS_PER_DAY * 1000;

/**
 * Truth at the discovery search start: close approachers pass the Earth at a
 * miss distance log-uniform in 0.002-0.1 au, 5-25 km/s, 0.3-3 days after it,
 * on bound heliocentric orbits with a < 4 au;
 * ordinary objects are main-belt-like (a 2.1-3.2 au, e < 0.25, i < 20 deg) or
 * NEO-like (a 1.0-2.6 au, q 0.8-1.3 au, i < 30 deg) with random angles.
 */
function drawTruth(kind: CaseKind, random: RandomSource): { state: HeliocentricState; missAu: number | null; hMag: number } {
  const startTt = ttFromUtc(new Date(BASE_EPOCH_MS + Math.floor(random.uniform() * 300) * MS_PER_DAY));
  if (kind === 'close') {
    // Redraw until the heliocentric orbit is bound with a < 4 au, as every known near-Earth object's is.
    for (;;) {
      const missAu = 0.002 * Math.pow(50, random.uniform());
      const speed = ((5 + 20 * random.uniform()) * SECONDS_PER_DAY) / KM_PER_AU;
      const dir = randomUnit(random);
      let n = randomUnit(random);
      const along = n[0] * dir[0] + n[1] * dir[1] + n[2] * dir[2];
      n = [n[0] - along * dir[0], n[1] - along * dir[1], n[2] - along * dir[2]];
      const nn = Math.hypot(...n);
      const lead = 0.3 + 2.7 * random.uniform();
      // Straight-line geocentric motion back to the start (the integrator adds the bending later).
      const geo = [0, 1, 2].map((k) => (missAu * n[k]!) / nn - speed * dir[k]! * lead);
      const e0 = HelioState(Body.Earth, AstroTime.FromTerrestrialTime(startTt));
      const state = { tt: startTt, x: e0.x + geo[0]!, y: e0.y + geo[1]!, z: e0.z + geo[2]!, vx: e0.vx + speed * dir[0], vy: e0.vy + speed * dir[1], vz: e0.vz + speed * dir[2] };
      const energy = (state.vx ** 2 + state.vy ** 2 + state.vz ** 2) / 2 - GM_SUN_AU3_PER_DAY2 / Math.hypot(state.x, state.y, state.z);
      if (energy < 0 && -GM_SUN_AU3_PER_DAY2 / (2 * energy) < 4) return { state, missAu, hMag: 24 + 6 * random.uniform() };
    }
  }
  const mainBelt = random.uniform() < 0.5;
  const a = mainBelt ? 2.1 + 1.1 * random.uniform() : 1.0 + 1.6 * random.uniform();
  const q = mainBelt ? a * (1 - 0.25 * random.uniform()) : Math.min(a * 0.98, 0.8 + 0.5 * random.uniform());
  const e = 1 - q / a;
  const iDeg = (mainBelt ? 20 : 30) * random.uniform();
  const period = 2 * Math.PI * Math.sqrt(a ** 3 / GM_SUN_AU3_PER_DAY2);
  const tpTt = startTt - period * random.uniform();
  const state = stateFromPerihelionElements({ qAu: q, e, iDeg, nodeDeg: 360 * random.uniform(), periDeg: 360 * random.uniform(), tpTt }, startTt);
  return { state, missAu: null, hMag: mainBelt ? 15 + 4 * random.uniform() : 18 + 6 * random.uniform() };
}

/**
 * One calibration case for `seed` (reproducible). Returns null when the drawn
 * truth is not observable from the survey site within a day (the caller draws
 * the next seed).
 */
export function generateCase(kind: CaseKind, seed: number): CalibrationCase | null {
  const random = createRandom(seed * 7919 + (kind === 'close' ? 1 : 2));
  const { state, missAu, hMag } = drawTruth(kind, random);
  const close = kind === 'close';
  // Scan the first day in 20-minute steps with a two-body-free straight-line guess for night and altitude.
  const startMs = utcFromTt(state.tt).getTime();
  const obsCount = 3 + Math.floor(random.uniform() * 4);
  const arcMin = 20 + 100 * random.uniform();
  const sigma = 0.2 + 0.6 * random.uniform();
  let firstMs: number | null = null;
  for (let k = 0; k < 72 && firstMs === null; k++) {
    const tMs = startMs + k * 20 * 60_000;
    const ok = [0, arcMin].every((dtMin) => {
      const tt = state.tt + (tMs + dtMin * 60_000 - startMs) / MS_PER_DAY;
      const d = tt - state.tt;
      const approx = { x: state.x + state.vx * d, y: state.y + state.vy * d, z: state.z + state.vz * d };
      const date = new Date(tMs + dtMin * 60_000);
      const geometry = observerGeometry(SURVEY_SITE, date);
      const place = astrometricPlace(approx, { x: state.vx, y: state.vy, z: state.vz }, geometry);
      if (place.elongationDeg < 50) return false;
      const alt = altitudes(SURVEY_SITE, date, place.raDeg, place.decDeg);
      return alt.object > 20 && alt.sun < -12;
    });
    if (ok) firstMs = tMs;
  }
  if (firstMs === null) return null;
  const obsMs = Array.from({ length: obsCount }, (_, k) => firstMs! + (k * arcMin * 60_000) / (obsCount - 1) + (k > 0 && k < obsCount - 1 ? (random.uniform() - 0.5) * 60_000 : 0));
  const lastMs = obsMs[obsMs.length - 1]!;
  const predictMs = CALIBRATION_HORIZONS_H.map((h) => lastMs + h * 3_600_000);
  const meanMs = obsMs.reduce((a, b) => a + b, 0) / obsMs.length;
  const allMs = [...obsMs, ...predictMs, meanMs];
  const truthStates = integrateTruth(state, allMs.map((ms) => ttFromUtc(new Date(ms))), close ? 0.001 : 0.004);
  const placeAt = (k: number, site: GeodeticLocation) => {
    const s = truthStates[k]!;
    return astrometricPlace({ x: s.x, y: s.y, z: s.z }, { x: s.vx, y: s.vy, z: s.vz }, observerGeometry(site, new Date(allMs[k]!)));
  };
  const observations: TrackletObservation[] = [];
  let rangeAu = 0;
  for (let k = 0; k < obsMs.length; k++) {
    const place = placeAt(k, SURVEY_SITE);
    if (k === 0) rangeAu = place.deltaAu;
    const frame = tangentFrame(unitFromRaDec(place.raDeg * RAD_PER_DEG, place.decDeg * RAD_PER_DEG));
    const noisy = raDecFromVector(unproject(frame, (random.normal() * sigma) / ARCSEC_PER_RAD, (random.normal() * sigma) / ARCSEC_PER_RAD));
    const vMag = apparentMagnitudeHG(hMag, 0.15, place.rAu, place.deltaAu, Math.min(place.phaseDeg, 170)) + 0.1 * random.normal();
    observations.push({
      t: new Date(obsMs[k]!).toISOString(),
      raDeg: noisy.raRad * DEG_PER_RAD,
      decDeg: noisy.decRad * DEG_PER_RAD,
      sigmaArcsec: sigma,
      mag: Math.round(vMag * 100) / 100,
      band: 'V',
      observer: SURVEY_SITE,
    });
  }
  const truth = CALIBRATION_HORIZONS_H.map((hours, j) => {
    const place = placeAt(obsMs.length + j, FOLLOW_UP_SITE);
    return { hours, timeUtc: new Date(predictMs[j]!), raDeg: place.raDeg, decDeg: place.decDeg };
  });
  const meanEpochRangeAu = placeAt(allMs.length - 1, SURVEY_SITE).deltaAu;
  const meanEpochState = truthStates[allMs.length - 1]!;
  return { id: `${kind}-${seed}`, kind, missAu, rangeAu, meanEpochRangeAu, meanEpochState, observations, lastObservationMs: lastMs, truth };
}

/** The first `count` observable cases of a kind, from seed `firstSeed` on. */
export function generateCases(kind: CaseKind, count: number, firstSeed = 1): CalibrationCase[] {
  const out: CalibrationCase[] = [];
  for (let seed = firstSeed; out.length < count && seed < firstSeed + 50 * count; seed++) {
    const c = generateCase(kind, seed);
    if (c) out.push(c);
  }
  return out;
}

/** Errors of one case at one horizon: nominal and linear extrapolation (arcsec), the nominal's distance in sigma, the ellipse's 1-sigma major axis. */
export interface HorizonResult {
  readonly hours: number;
  readonly nominalErrorArcsec: number;
  readonly linearErrorArcsec: number;
  readonly sigmaDistance: number;
  readonly majorArcsec: number;
}

/** Runs the estimator on a case and compares its ephemeris from FOLLOW_UP_SITE with the truth. */
export function evaluateCase(c: CalibrationCase, options: { members?: number; seed?: number; ranging?: RangingOptions } = {}): HorizonResult[] {
  return evaluateCaseWithRange(c, options).horizons;
}

/** evaluateCase plus the estimate's range percentiles at the tracklet's mean epoch (au), to compare with meanEpochRangeAu. */
export function evaluateCaseWithRange(
  c: CalibrationCase,
  options: { members?: number; seed?: number; ranging?: RangingOptions } = {},
): { horizons: HorizonResult[]; rangeAu: { p5: number; p50: number; p95: number } } {
  const estimate = estimateObject({
    objectId: c.id,
    observations: c.observations,
    now: new Date(c.lastObservationMs),
    members: options.members ?? 1000,
    seed: options.seed ?? 1,
    ranging: options.ranging,
  });
  const rows = estimate.ephemeris(FOLLOW_UP_SITE, c.truth.map((t) => t.timeUtc));
  const horizons = rows.map((row, j) => {
    const truth = c.truth[j]!;
    const [east, north] = offsetArcsec(row.ra, row.dec, truth.raDeg, truth.decDeg);
    const linear = extrapolateAttributable(estimate.attributable!, truth.timeUtc.getTime());
    const [le, ln] = offsetArcsec(linear.raRad * DEG_PER_RAD, linear.decRad * DEG_PER_RAD, truth.raDeg, truth.decDeg);
    return {
      hours: truth.hours,
      nominalErrorArcsec: Math.hypot(east, north),
      linearErrorArcsec: Math.hypot(le, ln),
      sigmaDistance: Math.sqrt(ellipseDistanceSquared(row.unc!, east, north)),
      majorArcsec: row.unc!.major,
    };
  });
  return { horizons, rangeAu: estimate.summary.rangeAu };
}
