import type { GeodeticLocation } from '../../config/schema.js';
import { absoluteMagnitudeFromObserved, apparentMagnitudesHG, DEFAULT_BAND_OFFSETS, diameterRangeM, phaseTermHG } from '../../photometry/magnitudes.js';
import { median, quantiles, quantileSorted, systematicResample } from '../../stats/index.js';
import { ARCSEC_PER_RAD, GM_SUN_AU3_PER_DAY2, KM_PER_AU, RAD_PER_DEG } from '../constants.js';
import { stateFromPerihelionElements, type HeliocentricState, type PerihelionElements } from '../elements.js';
import { astrometricPlace, DEFAULT_SLOPE_G, ensemblePlaces, observerGeometry, rowsFromPlaces, type EnsemblePlaces, type EphemerisRow, type UncertaintyEllipse } from '../ephemeris.js';
import type { EphemerisOptions, EstimateSummary, ObjectEstimate, Percentiles, ResidualRow } from '../estimate-types.js';
import type { OrbitBlock } from '../../domain/orbit-block.js';
import type { TrackletObservation } from '../../domain/tracklet.js';
import { EARTH_INDEX, PerturberTable } from '../perturbers.js';
import { streamEnsemble } from '../propagate.js';
import { ttFromTtIso, ttFromUtc, utcFromTt } from '../time.js';
import { batchedEnsemblePlaces, batchedEnsemblePlacesForSites, batchedStream } from './batches.js';
import { fitAttributable, type Attributable } from './attributable.js';
import { EstimationInputError } from './errors.js';
import { prepareObservations, type PreparedObservation } from './observations.js';
import { createRandom, type RandomSource } from './random.js';
import { systematicRanging, type RangingOptions, type RangingResult } from './ranging.js';
import { skySpread } from './sky-spread.js';
import { project, tangentFrame, unitFromRaDec } from './tangent.js';

export interface EstimateInput {
  readonly objectId: string;
  readonly observations: readonly TrackletObservation[];
  readonly orbit?: OrbitBlock | undefined;
  /** The injected clock: the close-approach search starts here (or at the last observation if later). */
  readonly now: Date;
  /** Virtual orbits in the ensemble; default 1000. */
  readonly members?: number | undefined;
  /** Seed of the ensemble's random draws; default 1. The same input and seed give the same ensemble. */
  readonly seed?: number | undefined;
  /** Ranging settings (prior exponent, grid size); defaults as in ranging.ts. */
  readonly ranging?: RangingOptions | undefined;
}

/** An ephemeris row with the ensemble's 99 % extent beside the 1-sigma ellipse. */
export interface EstimatedEphemerisRow extends EphemerisRow {
  readonly extent99: UncertaintyEllipse | null;
}

/** ObjectEstimate with the ensemble and fit exposed for diagnostics and calibration. */
export interface ShortArcEstimate extends ObjectEstimate {
  /** Nominal state and the virtual orbits, heliocentric EQJ at epochTt (au, au/day). */
  readonly nominal: HeliocentricState;
  readonly virtualOrbits: readonly HeliocentricState[];
  /** Topocentric range of each virtual orbit at the tracklet's epoch, au (from the survey's first site). */
  readonly memberRangeAu: Float64Array;
  /** Absolute magnitude of the nominal and of each virtual orbit (null when unknown). */
  readonly nominalH: number | null;
  readonly memberH: Float64Array | null;
  readonly attributable: Attributable | null;
  /** Ranging diagnostics; effectiveSampleSize is that of the importance sampling inside the cells. */
  readonly ranging: { passes: number; evaluatedNodes: number; minChiSquare: number; effectiveSampleSize: number } | null;
  /** What the ephemerides are made from (estimateFromCore rebuilds them from it). */
  readonly core: EnsembleCore;
  ephemeris(location: GeodeticLocation, timesUtc: readonly Date[], options?: EphemerisOptions): EstimatedEphemerisRow[];
  ephemerisForSites(locations: readonly GeodeticLocation[], timesUtc: readonly Date[], options?: EphemerisOptions): EstimatedEphemerisRow[][];
}

export const DEFAULT_MEMBERS = 1000;
/**
 * The estimator's version: raised whenever the same inputs give another
 * estimate (2: the encounter window of the range prior went from 15 to 10
 * days; 3: proposals shaped like the encounter component's peak in
 * range-rate, and that peak's mass in a cell integrated in asinh; 4: a
 * second round of proposals when the first's effective sample size is
 * low), so that an estimate kept under an older estimator is not reused
 * (estimateKey in src/planning/reuse.ts).
 */
export const ESTIMATOR_VERSION = 4;
/**
 * Below this effective sample size the estimate's notes warn that few
 * distinct orbits carry the weight (the pooled reference cases all stay above
 * 200 after the second round of proposals; docs/accuracy.md).
 */
export const FEW_ORBITS_BELOW = 50;
export const CLOSE_APPROACH_WINDOW_DAYS = 10;
/** Median minimum distance below which `closeApproach` is set, au (contract: about 20 lunar distances). */
export const CLOSE_APPROACH_AU = 0.05;
/** Mean Earth-Moon distance, km (384 400 km, the usual rounded semi-major axis). */
export const LUNAR_DISTANCE_KM = 384_400;
/** Albedo range for the diameter summary (dark C-like to bright S/E-like, common practice). */
export const ALBEDO_RANGE = { min: 0.05, max: 0.25 } as const;
/**
 * Default 1-sigma spread of an orbit block that gives no covariance: q 1e-3
 * relative, e 1e-3, angles 0.01 deg, tp 0.01 day (a few-night orbit's size,
 * stated, not measured).
 */
export const ORBIT_BLOCK_DEFAULT_SIGMA = { qRelative: 1e-3, e: 1e-3, angleDeg: 0.01, tpDays: 0.01 } as const;
/**
 * The magnitude budget beside the ensemble's own spread (docs/accuracy.md):
 * - TRACKLET_SCATTER_PRIOR_MAG: the scatter expected of one survey magnitude of
 *   a faint moving object (noise, trailing, rotation; common practice, 0.2-0.3
 *   mag), pooled with the tracklet's own scatter with TRACKLET_SCATTER_PRIOR_DOF
 *   degrees of freedom, since 3-6 values estimate a scatter poorly;
 * - ROTATION_MEAN_MAG: how far the tracklet's mean can sit from the mean of
 *   the light curve when the arc is shorter than the period (rms of a
 *   0.4-0.5 mag peak-to-peak light curve; small near-Earth objects show 0.1-1
 *   mag, from memory of published light-curve surveys);
 * - BAND_CONVERSION_MAG: an individual object's colour against the mean
 *   colours used to reduce R, g, r, ... to V (photometry's DEFAULT_BAND_OFFSETS;
 *   S and C types differ by about 0.1 in V - R, from memory);
 * - SLOPE_G_SIGMA: the spread of the H-G slope G about 0.15 for objects whose
 *   G is not known (fitted G of asteroids spread over about -0.1 to 0.6, from
 *   memory), taken through the change of the phase term between the tracklet's
 *   phase angle and the row's;
 * - ORBIT_BLOCK_H_SIGMA_MAG: the uncertainty of an H given with an orbit
 *   block (a few nights' photometry; from memory of typical catalogue H).
 */
export const TRACKLET_SCATTER_PRIOR_MAG = 0.25;
export const TRACKLET_SCATTER_PRIOR_DOF = 2;
export const ROTATION_MEAN_MAG = 0.15;
export const BAND_CONVERSION_MAG = 0.1;
export const SLOPE_G_SIGMA = 0.15;
export const ORBIT_BLOCK_H_SIGMA_MAG = 0.3;

/** d(phase term)/dG at a phase angle, mag per unit G (central difference of photometry's H-G phase term). */
function phaseTermSlope(phaseDeg: number, g: number): number {
  const alpha = Math.min(Math.max(phaseDeg, 0), 179);
  const step = 0.01;
  return (phaseTermHG(g + step, alpha) - phaseTermHG(g - step, alpha)) / (2 * step);
}

/** Spacing of the close-approach search samples, days; the minimum between samples is found by linear relative motion. */
const APPROACH_SAMPLE_DAYS = 0.05;
/** Virtual orbits used for the close-approach percentiles (a prefix of the shuffled ensemble). */
const APPROACH_MEMBERS = 256;
/** Step fraction for the close-approach search (coarser than the ephemeris default 0.02: distances to a few per cent suffice there). */
const APPROACH_STEP_FRACTION = 0.05;

function percentiles(values: ArrayLike<number>): Percentiles {
  const [p5, p50, p95] = quantiles(values, [0.05, 0.5, 0.95] as const);
  return { p5, p50, p95 };
}

/** q, a (au; Infinity for e >= 1) and e of a heliocentric state (two-body, GM of the Sun). */
function conicOf(s: HeliocentricState): { q: number; a: number; e: number } {
  const r = Math.hypot(s.x, s.y, s.z);
  const v2 = s.vx * s.vx + s.vy * s.vy + s.vz * s.vz;
  const hx = s.y * s.vz - s.z * s.vy, hy = s.z * s.vx - s.x * s.vz, hz = s.x * s.vy - s.y * s.vx;
  const h2 = hx * hx + hy * hy + hz * hz;
  const energy = v2 / 2 - GM_SUN_AU3_PER_DAY2 / r;
  const e = Math.sqrt(Math.max(0, 1 + (2 * energy * h2) / (GM_SUN_AU3_PER_DAY2 * GM_SUN_AU3_PER_DAY2)));
  const p = h2 / GM_SUN_AU3_PER_DAY2;
  return { q: p / (1 + e), a: energy < 0 ? -GM_SUN_AU3_PER_DAY2 / (2 * energy) : Infinity, e };
}

/**
 * Orbit classes used in the summary: NEO-like q < 1.3 au (the usual NEO
 * definition); main-belt-like q >= 1.3 au with 2.0 <= a <= 3.3 au and e < 0.3
 * (between the 4:1 and 2:1 Jupiter resonances, common practice); other.
 */
export function orbitClass(s: HeliocentricState): 'neo' | 'mainBelt' | 'other' {
  const { q, a, e } = conicOf(s);
  if (q < 1.3) return 'neo';
  if (a >= 2 && a <= 3.3 && e < 0.3) return 'mainBelt';
  return 'other';
}

interface MagnitudeObservation {
  readonly index: number;
  readonly vMag: number;
}

/** Tracklet magnitudes reduced to V (band offsets from photometry's DEFAULT_BAND_OFFSETS; band null counts as V). */
function magnitudesInV(observations: readonly PreparedObservation[], used: readonly boolean[], notes: string[]): MagnitudeObservation[] {
  const out: MagnitudeObservation[] = [];
  const unknown = new Set<string>();
  observations.forEach((o, i) => {
    if (!used[i] || o.mag === null) return;
    const band = o.band ?? 'V';
    const offset = Object.prototype.hasOwnProperty.call(DEFAULT_BAND_OFFSETS, band) ? DEFAULT_BAND_OFFSETS[band] : undefined;
    if (offset === undefined) {
      unknown.add(band);
      return;
    }
    out.push({ index: i, vMag: o.mag - offset });
  });
  if (unknown.size > 0) notes.push(`magnitudes in band(s) ${[...unknown].join(', ')} were not used for H: no colour offset from V is known for them`);
  return out;
}

/**
 * H of each state from the tracklet magnitudes: the mean over observations of
 * V - 5 log10(r Delta) - phase term (H-G with slope `slopeG`, Bowell et al. 1989, via
 * photometry's absoluteMagnitudeFromObserved), geometry of each member at each
 * observation time (light-time corrected, from that observation's observer).
 */
function absoluteMagnitudes(states: readonly HeliocentricState[], observations: readonly PreparedObservation[], mags: readonly MagnitudeObservation[], slopeG: number): Float64Array | null {
  if (mags.length === 0) return null;
  const n = states.length;
  const sums = new Float64Array(n);
  const counts = new Float64Array(n);
  const geometries = mags.map((m) => observerGeometry(observations[m.index]!.observer, observations[m.index]!.timeUtc));
  streamEnsemble(
    states,
    mags.map((m) => ttFromUtc(observations[m.index]!.timeUtc)),
    (k, pos, vel) => {
      for (let j = 0; j < n; j++) {
        const place = astrometricPlace({ x: pos[3 * j]!, y: pos[3 * j + 1]!, z: pos[3 * j + 2]! }, { x: vel[3 * j]!, y: vel[3 * j + 1]!, z: vel[3 * j + 2]! }, geometries[k]!);
        if (place.phaseDeg > 179) continue;
        sums[j]! += absoluteMagnitudeFromObserved(mags[k]!.vMag, slopeG, place.rAu, place.deltaAu, place.phaseDeg);
        counts[j]! += 1;
      }
    },
    { stepFraction: 0.2, maxStepDays: 0.05 },
  );
  return sums.map((s, j) => (counts[j]! > 0 ? s / counts[j]! : Number.NaN));
}

/**
 * The part of the magnitude uncertainty that does not come from the orbit:
 * the tracklet's H scatter (the nominal's individual H values, pooled with
 * TRACKLET_SCATTER_PRIOR_MAG), the rotation term, the band conversion, and
 * the phase angle at which the H was measured (for the slope term).
 */
export interface MagnitudeBudget {
  /** sqrt(mean-scatter^2 + rotation^2 + band^2), mag. */
  readonly fixedMag: number;
  /** Mean phase angle of the magnitudes that gave H, deg (0 for an orbit block's H). */
  readonly referencePhaseDeg: number;
  /** The spread of G taken for the slope term (0 when G is given). */
  readonly slopeSigma: number;
  readonly slopeG: number;
}

function trackletMagnitudeBudget(nominal: HeliocentricState, observations: readonly PreparedObservation[], mags: readonly MagnitudeObservation[], slopeG: number, slopeGiven: boolean): MagnitudeBudget | null {
  if (mags.length === 0) return null;
  const hs: number[] = [];
  const phases: number[] = [];
  const geometries = mags.map((m) => observerGeometry(observations[m.index]!.observer, observations[m.index]!.timeUtc));
  streamEnsemble(
    [nominal],
    mags.map((m) => ttFromUtc(observations[m.index]!.timeUtc)),
    (k, pos, vel) => {
      const place = astrometricPlace({ x: pos[0]!, y: pos[1]!, z: pos[2]! }, { x: vel[0]!, y: vel[1]!, z: vel[2]! }, geometries[k]!);
      if (place.phaseDeg > 179) return;
      hs.push(absoluteMagnitudeFromObserved(mags[k]!.vMag, slopeG, place.rAu, place.deltaAu, place.phaseDeg));
      phases.push(place.phaseDeg);
    },
    { stepFraction: 0.2, maxStepDays: 0.05 },
  );
  if (hs.length === 0) return null;
  const n = hs.length;
  const mean = hs.reduce((a, b) => a + b, 0) / n;
  const sampleVariance = n > 1 ? hs.reduce((a, h) => a + (h - mean) ** 2, 0) / (n - 1) : 0;
  const pooled = ((n - 1) * sampleVariance + TRACKLET_SCATTER_PRIOR_DOF * TRACKLET_SCATTER_PRIOR_MAG ** 2) / (n - 1 + TRACKLET_SCATTER_PRIOR_DOF);
  const converted = mags.some((m) => (observations[m.index]!.band ?? 'V') !== 'V');
  return {
    fixedMag: Math.sqrt(pooled / n + ROTATION_MEAN_MAG ** 2 + (converted ? BAND_CONVERSION_MAG ** 2 : 0)),
    referencePhaseDeg: phases.reduce((a, b) => a + b, 0) / phases.length,
    slopeSigma: slopeGiven ? 0 : SLOPE_G_SIGMA,
    slopeG,
  };
}

/** Minimum geocentric distance (au) of each state over [startTt, startTt + days]: samples plus linear closest approach between them. */
function minimumGeocentricDistances(states: readonly HeliocentricState[], startTt: number, days: number, perturbers: PerturberTable): Float64Array {
  const n = states.length;
  const sampleCount = Math.ceil(days / APPROACH_SAMPLE_DAYS) + 1;
  const times = Array.from({ length: sampleCount }, (_, k) => startTt + (k * days) / (sampleCount - 1));
  const half = days / (sampleCount - 1) / 2;
  const best = new Float64Array(n).fill(Infinity);
  // The Earth's state at each sample from the propagation's own perturber table (Hermite between its nodes, ~1e-12 au).
  const earthAt = times.map((tt) => perturbers.bodyStateAt(EARTH_INDEX, tt));
  batchedStream(
    states,
    times,
    days,
    (k, j, pos, vel, o) => {
      const earth = earthAt[k]!;
      const dx = pos[o]! - earth.x, dy = pos[o + 1]! - earth.y, dz = pos[o + 2]! - earth.z;
      const wx = vel[o]! - earth.vx, wy = vel[o + 1]! - earth.vy, wz = vel[o + 2]! - earth.vz;
      const w2 = wx * wx + wy * wy + wz * wz;
      let s = w2 > 0 ? -(dx * wx + dy * wy + dz * wz) / w2 : 0;
      if (s > half) s = half;
      if (s < -half) s = -half;
      if (k === 0 && s < 0) s = 0;
      if (k === sampleCount - 1 && s > 0) s = 0;
      const d = Math.hypot(dx + s * wx, dy + s * wy, dz + s * wz);
      if (d < best[j]!) best[j] = d;
    },
    { stepFraction: APPROACH_STEP_FRACTION, perturbers },
  );
  return best;
}

/**
 * Robust centre of the ranging cloud: the median along each principal
 * axis of the members' (equally weighted once resampled) (ln range, range-rate) scatter, each coordinate first
 * scaled by its median absolute deviation; the nominal is the member nearest
 * that point (so it is a real, data-consistent orbit and does not jump between
 * the modes of the cloud the way the highest-weight node can).
 */
function robustCentreIndex(logRange: Float64Array, rate: Float64Array): number {
  const n = logRange.length;
  const mx = median(logRange), my = median(rate);
  const mad = (a: Float64Array, m: number): number => median(a.map((v) => Math.abs(v - m))) || 1e-12;
  const sx = mad(logRange, mx), sy = mad(rate, my);
  const xs = logRange.map((v) => (v - mx) / sx), ys = rate.map((v) => (v - my) / sy);
  let cxx = 0, cxy = 0, cyy = 0;
  for (let j = 0; j < n; j++) { cxx += xs[j]! * xs[j]!; cxy += xs[j]! * ys[j]!; cyy += ys[j]! * ys[j]!; }
  const angle = 0.5 * Math.atan2(2 * cxy, cxx - cyy);
  const c = Math.cos(angle), s = Math.sin(angle);
  const along = xs.map((x, j) => c * x + s * ys[j]!), across = xs.map((x, j) => -s * x + c * ys[j]!);
  const a0 = median(along), b0 = median(across);
  let bestIndex = 0, bestD = Infinity;
  for (let j = 0; j < n; j++) {
    const d = (along[j]! - a0) ** 2 + (across[j]! - b0) ** 2;
    if (d < bestD) { bestD = d; bestIndex = j; }
  }
  return bestIndex;
}

/**
 * Chi-square value exceeded with probability 0.001 for `dof` degrees of
 * freedom, by the Wilson-Hilferty cube-root normal approximation (Wilson &
 * Hilferty 1931, PNAS 17, 684): dof (1 - h + z sqrt(h))^3, h = 2 / (9 dof),
 * z = 3.0902 (the normal's 0.999 point). Within 3 % of the exact values
 * (10.83, 13.82, 16.27, 18.47 for 1-4 dof; Abramowitz & Stegun table 26.8).
 */
export function chiSquareAt999(dof: number): number {
  const h = 2 / (9 * dof);
  return dof * (1 - h + 3.0902 * Math.sqrt(h)) ** 3;
}

/**
 * Systematic ranging with positions judged by orbits: when even the best
 * node's chi-square exceeds its 0.1 % point (2n - 6 degrees of freedom: four
 * angles, range and range-rate), the position with the largest normalised
 * residual against that orbit is left out and the ranging repeated, worst
 * first, at most a third of the positions and while 3 remain (the attributable's
 * own leave-one-out test is not used: a close approacher's path curves by
 * tens of arcseconds within an hour, which no low polynomial on the sky follows).
 */
function rangingWithOutliers(observations: readonly PreparedObservation[], first: Attributable, options: RangingOptions): { ranging: RangingResult; attributable: Attributable; flagged: number } {
  let attributable = first;
  let ranging = systematicRanging(observations, attributable, options);
  const maxFlags = Math.floor(observations.length / 3);
  let flagged = 0;
  while (flagged < maxFlags) {
    const usedCount = attributable.used.filter(Boolean).length;
    const dof = 2 * usedCount - 6;
    if (dof < 1 || usedCount <= 3 || ranging.minChiSquare <= chiSquareAt999(dof)) break;
    const best = ranging.nodes.reduce((a, b) => (b.chiSquare < a.chiSquare ? b : a));
    const rows = residualsOf(ranging.stateOf(best.params, best.rangeAu, best.rangeRateAuPerDay), observations, attributable.used);
    let worst = -1;
    let worstChi = -1;
    observations.forEach((o, i) => {
      if (!attributable.used[i]) return;
      const row = rows[o.index]!;
      const sigmaArcsec = o.sigmaRad * ARCSEC_PER_RAD;
      const chi = (row.dRaArcsec ** 2 + row.dDecArcsec ** 2) / sigmaArcsec ** 2;
      if (chi > worstChi) {
        worstChi = chi;
        worst = i;
      }
    });
    if (worst < 0) break;
    const exclude = attributable.used.map((u, i) => !u || i === worst);
    attributable = fitAttributable(observations, { leaveOneOut: false, exclude });
    ranging = systematicRanging(observations, attributable, options);
    flagged++;
  }
  return { ranging, attributable, flagged };
}

function checkInput(input: EstimateInput): { members: number; seed: number } {
  if (typeof input.objectId !== 'string' || input.objectId.trim() === '') throw new EstimationInputError('objectId', input.objectId, 'expected a non-empty designation');
  if (!(input.now instanceof Date) || !Number.isFinite(input.now.getTime())) throw new EstimationInputError('now', input.now, 'expected a valid Date (the injected clock)');
  const members = input.members ?? DEFAULT_MEMBERS;
  if (!Number.isInteger(members) || members < 10 || members > 100_000) throw new EstimationInputError('members', members, 'expected a whole number of virtual orbits from 10 to 100000');
  const seed = input.seed ?? 1;
  if (!Number.isFinite(seed)) throw new EstimationInputError('seed', seed, 'expected a finite number');
  return { members, seed };
}

/** Draws elements around an orbit block with ORBIT_BLOCK_DEFAULT_SIGMA and returns states at the block's epoch. */
function orbitBlockEnsemble(orbit: OrbitBlock, members: number, random: RandomSource, spreadScale = 1): { epochTt: number; nominal: HeliocentricState; states: HeliocentricState[] } {
  const epochTt = ttFromTtIso('orbit.epoch', orbit.epoch);
  const base: PerihelionElements = { qAu: orbit.q, e: orbit.e, iDeg: orbit.i, nodeDeg: orbit.node, periDeg: orbit.peri, tpTt: ttFromTtIso('orbit.tp', orbit.tp) };
  const nominal = stateFromPerihelionElements(base, epochTt);
  const sd = {
    qRelative: ORBIT_BLOCK_DEFAULT_SIGMA.qRelative * spreadScale,
    e: ORBIT_BLOCK_DEFAULT_SIGMA.e * spreadScale,
    angleDeg: ORBIT_BLOCK_DEFAULT_SIGMA.angleDeg * spreadScale,
    tpDays: ORBIT_BLOCK_DEFAULT_SIGMA.tpDays * spreadScale,
  };
  const states = Array.from({ length: members }, () => {
    const el: PerihelionElements = {
      qAu: base.qAu * Math.max(0.5, 1 + sd.qRelative * random.normal()),
      e: Math.max(0, base.e + sd.e * random.normal()),
      iDeg: Math.min(180, Math.max(0, base.iDeg + sd.angleDeg * random.normal())),
      nodeDeg: base.nodeDeg + sd.angleDeg * random.normal(),
      periDeg: base.periDeg + sd.angleDeg * random.normal(),
      tpTt: base.tpTt + sd.tpDays * random.normal(),
    };
    return stateFromPerihelionElements(el, epochTt);
  });
  return { epochTt, nominal, states };
}

/** Fewest effective members for the tracklet weighting of an orbit-block ensemble to be used. */
const MIN_EFFECTIVE_MEMBERS = 30;

/** Chi-square of each state against the used observations of the tracklet (per-axis sigmas). */
function trackletChiSquare(states: readonly HeliocentricState[], observations: readonly PreparedObservation[], used: readonly boolean[]): Float64Array {
  const n = states.length;
  const chi2 = new Float64Array(n);
  const byObserver = new Map<string, PreparedObservation[]>();
  observations.forEach((o, k) => {
    if (!used[k]) return;
    const key = `${o.observer.latDeg},${o.observer.lonDeg},${o.observer.heightM}`;
    byObserver.set(key, [...(byObserver.get(key) ?? []), o]);
  });
  for (const group of byObserver.values()) {
    const places = ensemblePlaces(states, group[0]!.observer, group.map((o) => o.timeUtc));
    group.forEach((o, k) => {
      const cosDec = Math.cos(o.decRad);
      for (let m = 0; m < n; m++) {
        const j = k * n + m;
        let dRa = places.raDeg[j]! * RAD_PER_DEG - o.raRad;
        if (dRa > Math.PI) dRa -= 2 * Math.PI;
        else if (dRa < -Math.PI) dRa += 2 * Math.PI;
        const dDec = places.decDeg[j]! * RAD_PER_DEG - o.decRad;
        chi2[m]! += ((dRa * cosDec) ** 2 + dDec ** 2) / o.sigmaRad ** 2;
      }
    });
  }
  return chi2;
}

/**
 * Weights an orbit-block ensemble by its fit to the tracklet and resamples it
 * (importance resampling with weights exp(-chi^2/2), systematic resampling;
 * e.g. Muinonen & Bowell's statistical-ranging practice of weighting sample
 * orbits by their likelihood). The block's default spread is a stated guess;
 * the observations then decide which part of it is consistent. Returns null
 * when too few members fit (effective size below MIN_EFFECTIVE_MEMBERS).
 */
function weightByTracklet(
  states: readonly HeliocentricState[],
  observations: readonly PreparedObservation[],
  used: readonly boolean[],
  random: RandomSource,
): { states: HeliocentricState[]; effective: number } | null {
  const n = states.length;
  const chi2 = trackletChiSquare(states, observations, used);
  let best = Infinity;
  for (const c of chi2) best = Math.min(best, c);
  const w = Float64Array.from(chi2, (c) => Math.exp(-(c - best) / 2));
  let sum = 0;
  let sum2 = 0;
  for (const x of w) {
    sum += x;
    sum2 += x * x;
  }
  const effective = (sum * sum) / sum2;
  if (!(effective >= MIN_EFFECTIVE_MEMBERS)) return null;
  const out = systematicResample(w, n, random.uniform()).map((m) => states[m]!);
  return { states: out, effective };
}

/** Observed minus computed of one state against the tracklet, arcsec, with the attributable's outlier flags. */
function residualsOf(state: HeliocentricState, observations: readonly PreparedObservation[], used: readonly boolean[]): ResidualRow[] {
  const rows: ResidualRow[] = [];
  const geometries = observations.map((o) => observerGeometry(o.observer, o.timeUtc));
  streamEnsemble(
    [state],
    observations.map((o) => ttFromUtc(o.timeUtc)),
    (k, pos, vel) => {
      const o = observations[k]!;
      const place = astrometricPlace({ x: pos[0]!, y: pos[1]!, z: pos[2]! }, { x: vel[0]!, y: vel[1]!, z: vel[2]! }, geometries[k]!);
      const frameOffset = offsetOf(place.raDeg, place.decDeg, o);
      rows[k] = { t: o.timeUtc.toISOString(), dRaArcsec: frameOffset[0], dDecArcsec: frameOffset[1], outlier: !used[k] };
    },
  );
  // Back to the caller's order.
  return observations.map((o, k) => ({ o, row: rows[k]! })).sort((a, b) => a.o.index - b.o.index).map((x) => x.row);
}

function offsetOf(raDeg: number, decDeg: number, o: PreparedObservation): [number, number] {
  const frameCentre = unitFromRaDec(raDeg * RAD_PER_DEG, decDeg * RAD_PER_DEG);
  const p = project(tangentFrame(frameCentre), o.unit);
  return [p[0] * ARCSEC_PER_RAD, p[1] * ARCSEC_PER_RAD];
}

function checkSpreadEvery(value: number | undefined): number {
  const every = value ?? 1;
  if (!Number.isInteger(every) || every < 1) throw new EstimationInputError('spreadEvery', value, 'expected a whole number of rows of at least 1');
  return every;
}

/** Relative change of an axis, and change of position angle for an elongated ellipse, beyond which interpolating between coarse rows is not trusted. */
const SPREAD_AXIS_CHANGE = 0.5;
const SPREAD_PA_CHANGE_DEG = 10;

function spreadChangesFast(a: UncertaintyEllipse | null, b: UncertaintyEllipse | null): boolean {
  if (a === null || b === null) return a !== b;
  const rel = (x: number, y: number) => Math.abs(x - y) / Math.max(Math.min(x, y), 1e-9);
  if (rel(a.major, b.major) > SPREAD_AXIS_CHANGE || rel(a.minor, b.minor) > SPREAD_AXIS_CHANGE) return true;
  let dPa = Math.abs(a.pa - b.pa);
  dPa = Math.min(dPa, 180 - dPa);
  return a.major > 1.5 * a.minor && dPa > SPREAD_PA_CHANGE_DEG;
}

/** 0, every, 2 every, ... and the last index of `count` times. */
function sparseIndices(count: number, every: number): number[] {
  const out: number[] = [];
  for (let i = 0; i < count - 1; i += every) out.push(i);
  out.push(count - 1);
  return out;
}

/**
 * The ensemble statistics at row k from the sparse rows around it: linear in
 * time between them;
 * the ellipse's axes and position angle (taken the short way round 180 deg)
 * interpolated separately, magSigma likewise; null where either side has none.
 */
function spreadAt(sparse: readonly Pick<EstimatedEphemerisRow, 'unc' | 'magSigma' | 'extent99'>[], index: readonly number[], k: number, timesMs: readonly number[]): Pick<EstimatedEphemerisRow, 'unc' | 'magSigma' | 'extent99'> {
  let s = 0;
  while (s < index.length - 2 && index[s + 1]! <= k) s++;
  const a = sparse[s]!, b = sparse[s + 1] ?? a;
  const t0 = timesMs[index[s]!]!, t1 = timesMs[index[s + 1] ?? index[s]!]!;
  const f = t1 > t0 ? Math.min(1, Math.max(0, (timesMs[k]! - t0) / (t1 - t0))) : 0;
  const lin = (x: number, y: number) => x + (y - x) * f;
  const ellipse = (x: UncertaintyEllipse | null, y: UncertaintyEllipse | null): UncertaintyEllipse | null => {
    if (x === null || y === null) return f < 0.5 ? x : y;
    let pb = y.pa;
    if (pb - x.pa > 90) pb -= 180;
    else if (x.pa - pb > 90) pb += 180;
    return { major: lin(x.major, y.major), minor: lin(x.minor, y.minor), pa: ((lin(x.pa, pb) % 180) + 180) % 180 };
  };
  return {
    unc: ellipse(a.unc, b.unc),
    extent99: ellipse(a.extent99, b.extent99),
    magSigma: a.magSigma === null || b.magSigma === null ? (f < 0.5 ? a.magSigma : b.magSigma) : lin(a.magSigma, b.magSigma),
  };
}

/**
 * Estimates an object from its notice: the attributable fit, systematic
 * ranging into `members` virtual orbits (or, with an orbit block, an ensemble
 * drawn around it), the assessment summary and an ephemeris with uncertainty.
 * Nothing here is an impact prediction. Throws EstimationInputError for
 * degenerate or malformed input.
 */
export function estimateObject(input: EstimateInput): ShortArcEstimate {
  const { members, seed } = checkInput(input);
  // One table of the planets' and the Moon's states for every propagation of this estimate (nodes are computed once).
  const perturbers = new PerturberTable();
  const random = createRandom(seed);
  const notes: string[] = [];
  const hasObservations = input.observations.length > 0;
  if (!hasObservations && input.orbit === undefined) throw new EstimationInputError('observations', 0, 'a notice without an orbit block needs at least 2 observations');
  let observations: PreparedObservation[] = [];
  let attributable: Attributable | null = null;
  try {
    if (hasObservations) {
      observations = prepareObservations(input.observations);
      // Positions are judged against orbits (below), not against a straight line on the sky.
      attributable = fitAttributable(observations, { leaveOneOut: false });
    }
  } catch (err) {
    // With an orbit block the tracklet only adds residuals and H: a degenerate one is noted, not fatal.
    if (input.orbit === undefined || !(err instanceof EstimationInputError)) throw err;
    notes.push(`tracklet not used: ${err.message}`);
    observations = [];
    attributable = null;
  }
  let used = attributable ? attributable.used : [];

  let epochTt: number;
  let nominal: HeliocentricState;
  let states: HeliocentricState[];
  let rangeAu: Float64Array;
  let rangingInfo: ShortArcEstimate['ranging'] = null;
  let effectiveSampleSize: number;
  let method: EstimateSummary['method'];
  // An orbit block with a tracklet: weight the block's default spread by the fit to the tracklet,
  // narrowing it 10x while too few members fit; if none of the spreads fits, the tracklet decides
  // alone (ranging), which is honest about how little a short arc says.
  let blockStates: HeliocentricState[] | null = null;
  let blockNominalFits = false;
  let blockNote = '';
  let blockDrawn: ReturnType<typeof orbitBlockEnsemble> | null = null;
  if (input.orbit !== undefined) {
    blockDrawn = orbitBlockEnsemble(input.orbit, members, random);
    if (observations.length >= 2 && attributable) {
      for (let scale = 1; scale >= 0.01 && blockStates === null; scale /= 10) {
        const drawn: ReturnType<typeof orbitBlockEnsemble> = scale === 1 ? blockDrawn : orbitBlockEnsemble(input.orbit, members, random, scale);
        const weighted = weightByTracklet(drawn.states, observations, used, random);
        if (weighted === null) continue;
        blockDrawn = drawn;
        blockStates = weighted.states;
        blockNote = `orbit block taken as the nominal; its default element spread${scale < 1 ? ` x ${scale}` : ''} (no covariance given) weighted by the fit to the tracklet (effective ${Math.round(weighted.effective)} of ${members} members)`;
      }
      if (blockStates === null) {
        const nominalChi2 = trackletChiSquare([blockDrawn.nominal], observations, used)[0]!;
        const usedCount = used.filter(Boolean).length;
        blockNominalFits = nominalChi2 <= 9 * 2 * usedCount;
        notes.push(
          blockNominalFits
            ? "the orbit block fits the tracklet but its default spread is too wide to weight: the block is the nominal and the uncertainty is the tracklet's own (systematic ranging), which can only overstate it"
            : `the orbit block does not fit the tracklet (chi-square ${nominalChi2.toFixed(0)} for ${usedCount} positions): the estimate is the tracklet's own (systematic ranging); the block's H and G are kept`,
        );
      }
    } else {
      blockStates = blockDrawn.states;
      blockNote = 'orbit block taken as the nominal; the ensemble uses the default element spread (no covariance given)';
    }
  }
  if (blockStates !== null && blockDrawn !== null) {
    method = 'orbit-block';
    epochTt = blockDrawn.epochTt;
    nominal = blockDrawn.nominal;
    states = blockStates;
    notes.push(blockNote);
    const refTime = attributable ? new Date(attributable.epochMs) : input.now;
    const viewpoint = observations[0]?.observer ?? 'geocentre';
    rangeAu = Float64Array.from(ensemblePlaces(states, viewpoint, [refTime]).deltaAu);
  } else {
    method = 'ranging';
    const judged = rangingWithOutliers(observations, attributable!, input.ranging ?? {});
    const ranging: RangingResult = judged.ranging;
    attributable = judged.attributable;
    used = attributable.used;
    if (judged.flagged > 0) notes.push(`${judged.flagged} observation(s) fit no orbit with the others and were left out as outliers (chi-square of the best orbit above its 0.1 % point)`);
    const sampled = ranging.sample(attributable.covariance, members, random);
    const drawn = sampled.members;
    epochTt = ranging.epochTt;
    states = drawn.map((d) => d.state);
    rangeAu = Float64Array.from(drawn.map((d) => d.rangeAu));
    const centre = drawn[robustCentreIndex(rangeAu.map(Math.log), Float64Array.from(drawn.map((d) => d.rangeRateAuPerDay)))]!;
    nominal = ranging.stateOf(centre.fittedParams, centre.rangeAu, centre.rangeRateAuPerDay);
    effectiveSampleSize = sampled.effectiveSampleSize;
    notes.push(`virtual orbits sampled inside the ranging cells: ${sampled.proposals} proposals${sampled.rounds === 2 ? ' in two rounds (the second around the heaviest of the first, whose effective sample size was low)' : ''}, effective sample size ${Math.round(sampled.effectiveSampleSize)}`);
    if (effectiveSampleSize < FEW_ORBITS_BELOW) {
      notes.push(
        `only about ${Math.max(1, Math.round(effectiveSampleSize))} distinct orbits carry the virtual orbits' weight: the region's size is itself uncertain and may be too small; check that the positions belong to one object, or add positions`,
      );
    }
    if (blockNominalFits && blockDrawn !== null) {
      // The block's place as the nominal, moved to the ranging epoch so it propagates with the cloud.
      const target = epochTt;
      let moved: HeliocentricState | null = null;
      streamEnsemble([blockDrawn.nominal], [target], (_k, pos, vel) => {
        moved = { tt: target, x: pos[0]!, y: pos[1]!, z: pos[2]!, vx: vel[0]!, vy: vel[1]!, vz: vel[2]! };
      });
      if (moved !== null) nominal = moved;
    }
    rangingInfo = { passes: ranging.passes, evaluatedNodes: ranging.evaluatedNodes, minChiSquare: ranging.minChiSquare, effectiveSampleSize };
    notes.push(
      ranging.prior === 'mixture'
        ? 'range prior: mixture of the population model and close encounters of any orbit (docs/accuracy.md)'
        : ranging.prior === 'population'
          ? 'range prior: population model alone (main belt, near-Earth objects and a floor for every bound orbit; docs/accuracy.md)'
          : `range prior: rho^${ranging.priorExponent ?? ''} power law (less informative)`,
    );
    if (attributable.degreesOfFreedom === 0) notes.push('the fit has no redundancy (as many parameters as measurements): the uncertainty rests on the stated sigmas alone');
  }

  // Absolute magnitudes (H-G; the orbit block's G when given, else 0.15).
  const slopeG = input.orbit?.G ?? DEFAULT_SLOPE_G;
  let nominalH: number | null = null;
  let memberH: Float64Array | null = null;
  let magnitudeBudget: MagnitudeBudget | null = null;
  if (input.orbit?.H !== undefined) {
    nominalH = input.orbit.H;
    memberH = new Float64Array(members).fill(input.orbit.H);
  } else if (observations.length > 0) {
    const mags = magnitudesInV(observations, used, notes);
    const hs = absoluteMagnitudes([nominal, ...states], observations, mags, slopeG);
    if (hs) {
      nominalH = Number.isFinite(hs[0]!) ? hs[0]! : null;
      memberH = hs.subarray(1);
    }
    magnitudeBudget = trackletMagnitudeBudget(nominal, observations, mags, slopeG, input.orbit?.G !== undefined);
  }
  if (input.orbit?.H !== undefined) {
    magnitudeBudget = { fixedMag: Math.hypot(ORBIT_BLOCK_H_SIGMA_MAG, ROTATION_MEAN_MAG), referencePhaseDeg: 0, slopeSigma: input.orbit.G !== undefined ? 0 : SLOPE_G_SIGMA, slopeG };
  }
  const finiteH = memberH ? Array.from(memberH).filter(Number.isFinite) : [];
  const hMag = finiteH.length > 0 ? percentiles(finiteH) : null;
  const diameter = hMag ? diameterRangeM(hMag.p50, ALBEDO_RANGE.min, ALBEDO_RANGE.max) : null;

  // Classes and close approach.
  const counts = { neo: 0, mainBelt: 0, other: 0 };
  for (const s of states) counts[orbitClass(s)]++;
  const lastObsTt = observations.length > 0 ? ttFromUtc(observations[observations.length - 1]!.timeUtc) : -Infinity;
  const startTt = Math.max(ttFromUtc(input.now), lastObsTt);
  // Percentiles from a fair prefix of the (shuffled) ensemble: 256 members give the 5 % point to about 1.4 % in probability.
  const minDist = minimumGeocentricDistances(states.slice(0, APPROACH_MEMBERS), startTt, CLOSE_APPROACH_WINDOW_DAYS, perturbers);
  const auPct = percentiles(minDist);
  const ld = (au: number): number => (au * KM_PER_AU) / LUNAR_DISTANCE_KM;

  const residuals = observations.length > 0 ? residualsOf(nominal, observations, used) : [];
  const usedResiduals = residuals.filter((r) => !r.outlier);
  const rms = usedResiduals.length > 0 ? Math.sqrt(usedResiduals.reduce((s, r) => s + r.dRaArcsec ** 2 + r.dDecArcsec ** 2, 0) / (2 * usedResiduals.length)) : null;

  const summary: EstimateSummary = {
    method,
    members,
    rangeAu: percentiles(rangeAu),
    classFractions: { neo: counts.neo / members, mainBelt: counts.mainBelt / members, other: counts.other / members },
    hMag,
    diameterM: diameter ? { min: diameter.minM, max: diameter.maxM } : null,
    minGeocentricDistance: {
      withinDays: CLOSE_APPROACH_WINDOW_DAYS,
      au: auPct,
      lunarDistances: { p5: ld(auPct.p5), p50: ld(auPct.p50), p95: ld(auPct.p95) },
    },
    closeApproach: auPct.p50 < CLOSE_APPROACH_AU,
    residuals,
    rmsArcsec: rms,
    notes,
  };

  const firstObservedAt = observations.length > 0 ? observations[0]!.timeUtc.toISOString() : utcFromTt(epochTt).toISOString();
  const core: EnsembleCore = { objectId: input.objectId, firstObservedAt, summary, epochTt, nominal, states, nominalH, memberH, slopeG, magnitudeBudget };
  return {
    ...estimateFromCore(core, perturbers),
    nominal,
    virtualOrbits: states,
    memberRangeAu: rangeAu,
    nominalH,
    memberH,
    attributable,
    ranging: rangingInfo,
  };
}

/**
 * What an estimate's ephemerides are made from, as plain data: the summary, the
 * nominal and the virtual orbits at one epoch (heliocentric EQJ, au, au/day; TT
 * days since J2000.0), the absolute magnitudes and the magnitude budget. It can
 * be kept, stored, and moved to another epoch (advanceCore) without estimating
 * again.
 */
export interface EnsembleCore {
  readonly objectId: string;
  readonly firstObservedAt: string;
  readonly summary: EstimateSummary;
  readonly epochTt: number;
  readonly nominal: HeliocentricState;
  readonly states: readonly HeliocentricState[];
  readonly nominalH: number | null;
  readonly memberH: Float64Array | null;
  readonly slopeG: number;
  readonly magnitudeBudget: MagnitudeBudget | null;
}

/** An estimate built from its core: the ephemerides of ShortArcEstimate, and the core itself. */
export interface CoreEstimate extends ObjectEstimate {
  readonly core: EnsembleCore;
  ephemeris(location: GeodeticLocation, timesUtc: readonly Date[], options?: EphemerisOptions): EstimatedEphemerisRow[];
  ephemerisForSites(locations: readonly GeodeticLocation[], timesUtc: readonly Date[], options?: EphemerisOptions): EstimatedEphemerisRow[][];
}

/**
 * The core moved to `tt` (TT days since J2000.0): the nominal and every virtual
 * orbit propagated together (propagate.ts, in encounter batches), the rest kept.
 * Ephemerides from the moved core differ from the original's by the
 * integrator's own error (the steps fall elsewhere), not by method.
 */
export function advanceCore(core: EnsembleCore, tt: number, perturbers: PerturberTable = new PerturberTable()): EnsembleCore {
  if (!Number.isFinite(tt)) throw new EstimationInputError('tt', tt, 'expected a finite TT (days since J2000.0)');
  const all = [core.nominal, ...core.states];
  const moved = new Array<HeliocentricState>(all.length);
  batchedStream(
    all,
    [tt],
    Math.abs(tt - core.epochTt),
    (_k, j, pos, vel, o) => {
      moved[j] = { tt, x: pos[o]!, y: pos[o + 1]!, z: pos[o + 2]!, vx: vel[o]!, vy: vel[o + 1]!, vz: vel[o + 2]! };
    },
    { perturbers },
  );
  return { ...core, epochTt: tt, nominal: moved[0]!, states: moved.slice(1) };
}

/**
 * Ephemerides (nominal with the ensemble's 1-sigma ellipse, 99 % extent and
 * magnitude sigma) and member positions from an estimate's core; estimateObject
 * returns these for the core it computed. The same core gives the same rows.
 */
export function estimateFromCore(core: EnsembleCore, perturbers: PerturberTable = new PerturberTable()): CoreEstimate {
  const { epochTt, nominal, states, nominalH, memberH, slopeG, magnitudeBudget } = core;
  const allStates = [nominal, ...states];
  const spanOf = (timesUtc: readonly Date[]) => timesUtc.reduce((m, d) => Math.max(m, Math.abs(ttFromUtc(d) - epochTt)), 0);
  type Spread = Pick<EstimatedEphemerisRow, 'unc' | 'magSigma' | 'extent99'>;
  const photometry = nominalH === null ? undefined : { hMag: nominalH, g: slopeG };
  /** The ensemble's statistics at each time of `places` (member 0 the nominal, the centre of the ellipse). */
  const spreadsOf = (places: EnsemblePlaces): Spread[] => {
    const n = places.memberCount;
    const mags = new Float64Array(n);
    return places.timesUtc.map((_, k) => {
      const spread = skySpread(places.raDeg[k * n]!, places.decDeg[k * n]!, places.raDeg, places.decDeg, k * n + 1, n - 1);
      let magSigma: number | null = null;
      if (memberH) {
        // Members 1..n-1 of the places are the virtual orbits, whose H are memberH[0..n-2]; NaN (no magnitude) sorts last.
        const finite = apparentMagnitudesHG(memberH, slopeG, places.rAu, places.deltaAu, places.phaseDeg, k * n + 1, n - 1, mags);
        if (finite > 1) {
          const sorted = mags.subarray(0, n - 1).sort();
          // Sigma of the ensemble: half the 16-84 % range, or the wider 1 % tail over 2.326 (the normal's 99 % point) when
          // one side stretches, as a close object's distance does when it heads at the observer (magnitudes skew long before positions).
          const at = (p: number): number => quantileSorted(sorted, p, finite);
          const median = at(0.5);
          const ensemble = Math.max((at(0.84) - at(0.16)) / 2, Math.max(median - at(0.01), at(0.99) - median) / 2.326);
          magSigma = ensemble;
          if (magnitudeBudget) {
            const slopeTerm = magnitudeBudget.slopeSigma * (phaseTermSlope(places.phaseDeg[k * n]!, magnitudeBudget.slopeG) - phaseTermSlope(magnitudeBudget.referencePhaseDeg, magnitudeBudget.slopeG));
            magSigma = Math.sqrt(ensemble ** 2 + magnitudeBudget.fixedMag ** 2 + slopeTerm ** 2);
          }
        }
      }
      return { unc: spread.sigma, magSigma, extent99: spread.extent99 };
    });
  };
  /** Rows for several sites from one propagation of the ensemble; with `spreadEvery` > 1 the ensemble only at every that many times (EphemerisOptions). */
  const ephemerisForSites = (locations: readonly GeodeticLocation[], timesUtc: readonly Date[], options: EphemerisOptions = {}): EstimatedEphemerisRow[][] => {
    const every = checkSpreadEvery(options.spreadEvery);
    const ensemble = (times: readonly Date[]) => batchedEnsemblePlacesForSites(allStates, locations, times, spanOf(times), { perturbers });
    if (every === 1 || timesUtc.length <= 2) {
      return ensemble(timesUtc).map((places, i) => {
        const spreads = spreadsOf(places);
        return rowsFromPlaces(places, 0, locations[i]!, photometry).map((row, k) => ({ ...row, ...spreads[k]! }));
      });
    }
    const full = (times: readonly Date[]): Spread[][] => ensemble(times).map(spreadsOf);
    const timesMs = timesUtc.map((d) => d.getTime());
    const coarse = sparseIndices(timesUtc.length, every);
    const coarseRows = full(coarse.map((i) => timesUtc[i]!));
    // Where the ellipse changes fast between coarse rows, the rows in between get the ensemble too.
    const refine: number[] = [];
    for (let s = 0; s + 1 < coarse.length; s++) {
      if (coarseRows.some((rows) => spreadChangesFast(rows[s]!.unc, rows[s + 1]!.unc))) for (let i = coarse[s]! + 1; i < coarse[s + 1]!; i++) refine.push(i);
    }
    // Rows with the ensemble's own statistics (coarse and refined); the others interpolate between coarse rows.
    const known = coarseRows.map((rows) => {
      const byRow = new Array<Spread | undefined>(timesUtc.length);
      coarse.forEach((i, j) => (byRow[i] = rows[j]!));
      return byRow;
    });
    if (refine.length > 0) full(refine.map((i) => timesUtc[i]!)).forEach((rows, site) => refine.forEach((i, j) => (known[site]![i] = rows[j]!)));
    return batchedEnsemblePlacesForSites([nominal], locations, timesUtc, spanOf(timesUtc), { perturbers }).map((places, site) =>
      rowsFromPlaces(places, 0, locations[site]!, photometry).map((row, k) => ({ ...row, ...(known[site]![k] ?? spreadAt(coarseRows[site]!, coarse, k, timesMs)) })),
    );
  };
  const ephemeris = (location: GeodeticLocation, timesUtc: readonly Date[], options: EphemerisOptions = {}): EstimatedEphemerisRow[] =>
    ephemerisForSites([location], timesUtc, options)[0]!;

  /** Where the virtual orbits are seen from `location` at `timeUtc` (astrometric ICRS, deg): an evenly spaced subset of at most `maxMembers`. */
  const memberPositions = (location: GeodeticLocation, timeUtc: Date, maxMembers = 500): { raDeg: number; decDeg: number }[] => {
    const stride = Math.max(1, Math.ceil(states.length / Math.max(1, maxMembers)));
    const subset = states.filter((_, k) => k % stride === 0);
    const places = batchedEnsemblePlaces(subset, location, [timeUtc], Math.abs(ttFromUtc(timeUtc) - epochTt), { perturbers });
    return Array.from({ length: subset.length }, (_, m) => ({ raDeg: places.raDeg[m]!, decDeg: places.decDeg[m]! }));
  };
  return {
    objectId: core.objectId,
    firstObservedAt: core.firstObservedAt,
    summary: core.summary,
    core,
    ephemeris,
    ephemerisForSites,
    memberPositions,
  };
}
