import type { GeodeticLocation } from '../config/schema.js';
import type { EphemerisRow } from '../orbit/ephemeris.js';
import { DEFAULT_SLOPE_G, ensemblePlaces, ephemerisFromState } from '../orbit/ephemeris.js';
import { stateFromPerihelionElements, type HeliocentricState, type PerihelionElements } from '../orbit/elements.js';
import type { EstimateSummary, ObjectEstimate, Percentiles } from '../orbit/estimate-types.js';
import { diameterRangeM } from '../photometry/magnitudes.js';
import { PlanningInputError, requireFinite, requireIsoUtc } from './errors.js';

/**
 * An ObjectEstimate from one known orbit (a notice's orbit block, or a test's
 * invented elements) when no ensemble exists: the nominal ephemeris of the orbit
 * with a stated, assumed uncertainty. Used by `nightjar plan` until tracklet
 * estimation is available, and by tests as an estimate independent of it.
 */

/** Assumed 1-sigma positional uncertainty of an orbit given without its covariance. */
export interface AssumedUncertainty {
  /** Semi-major axis at the reference time, arcsec. */
  majorArcsec: number;
  /** Linear growth of the semi-major axis per hour from the reference time, arcsec/h. */
  growthArcsecPerH: number;
  /** Minor / major axis ratio (0..1]. */
  axisRatio: number;
  /** 1-sigma of the predicted magnitude, mag. */
  magSigma: number;
}

/**
 * Planning assumption (not measured): an orbit block from a survey's short arc
 * is good to about 1 arcsec at its astrometry and degrades by about 2 arcsec
 * per hour, elongated along the motion (ratio 0.3); its H to about 0.3 mag.
 */
export const DEFAULT_ASSUMED_UNCERTAINTY: Readonly<AssumedUncertainty> = Object.freeze({
  majorArcsec: 1,
  growthArcsecPerH: 2,
  axisRatio: 0.3,
  magSigma: 0.3,
});

/** Days ahead searched for the minimum geocentric distance, and the sampling step, hours. */
export const CLOSE_APPROACH_SEARCH_DAYS = 7;
const CLOSE_APPROACH_STEP_H = 1;
/** Median minimum distance inside which an approach counts as close, au (estimate-types contract). */
export const CLOSE_APPROACH_AU = 0.05;
const AU_PER_LUNAR_DISTANCE = 384_400 / 149_597_870.7;
/** Albedo range behind the diameter range of the contract: 0.25 gives the small end, 0.05 the large end. */
const ALBEDO_SMALL_END = 0.25;
const ALBEDO_LARGE_END = 0.05;

export interface EstimateFromStateInput {
  objectId: string;
  /** ISO UTC of the first observation (discovery). */
  firstObservedAt: string;
  /** Heliocentric EQJ state (au, au/day) at its TT epoch. */
  state: HeliocentricState;
  /** Absolute magnitude H (V); null when unknown. */
  hMag: number | null;
  /** Slope G of the H-G system; default 0.15. */
  g?: number;
  /** Time the uncertainty grows from; default firstObservedAt. */
  referenceUtc?: string;
  uncertainty?: Partial<AssumedUncertainty>;
}

const single = (x: number): Percentiles => ({ p5: x, p50: x, p95: x });

function orbitClass(state: HeliocentricState): { neo: number; mainBelt: number; other: number } {
  const r = Math.hypot(state.x, state.y, state.z);
  const v2 = state.vx ** 2 + state.vy ** 2 + state.vz ** 2;
  const gm = 0.01720209895 ** 2; // Gaussian gravitational constant squared, au^3/day^2
  const a = 1 / (2 / r - v2 / gm);
  const hx = state.y * state.vz - state.z * state.vy;
  const hy = state.z * state.vx - state.x * state.vz;
  const hz = state.x * state.vy - state.y * state.vx;
  const p = (hx * hx + hy * hy + hz * hz) / gm;
  const e = Math.sqrt(Math.max(0, 1 - p / a));
  const q = a > 0 ? a * (1 - e) : p / (1 + e);
  // NEO: q < 1.3 au (the contract's definition); main belt: 2.0 < a < 3.3 au, q >= 1.66 au (common practice).
  if (q < 1.3) return { neo: 1, mainBelt: 0, other: 0 };
  if (a > 2.0 && a < 3.3 && q >= 1.66) return { neo: 0, mainBelt: 1, other: 0 };
  return { neo: 0, mainBelt: 0, other: 1 };
}

/**
 * The estimate of one orbit (state at an epoch): ephemeris rows from the orbit
 * module (perturbed propagation, light-time corrected topocentric places, H-G
 * magnitude) with `unc` = the assumed ellipse (major = majorArcsec +
 * growthArcsecPerH x |t - reference| h, minor = axisRatio x major, position
 * angle along the motion) and `magSigma` = the assumed value. Summary: one
 * member; the minimum geocentric distance sampled hourly over 7 days.
 */
export function estimateFromState(input: EstimateFromStateInput): ObjectEstimate {
  if (typeof input.objectId !== 'string' || input.objectId.length === 0) throw new PlanningInputError('objectId', input.objectId, 'expected a non-empty string');
  const firstObserved = requireIsoUtc('firstObservedAt', input.firstObservedAt);
  const reference = input.referenceUtc === undefined ? firstObserved : requireIsoUtc('referenceUtc', input.referenceUtc);
  const u: AssumedUncertainty = { ...DEFAULT_ASSUMED_UNCERTAINTY, ...input.uncertainty };
  requireFinite('uncertainty.majorArcsec', u.majorArcsec, 0);
  requireFinite('uncertainty.growthArcsecPerH', u.growthArcsecPerH, 0);
  requireFinite('uncertainty.axisRatio', u.axisRatio, 0, 1);
  requireFinite('uncertainty.magSigma', u.magSigma, 0);
  if (input.hMag !== null) requireFinite('hMag', input.hMag, -2, 40);
  const g = input.g ?? DEFAULT_SLOPE_G;
  requireFinite('g', g, -0.5, 1.5);
  const state = input.state;
  for (const k of ['tt', 'x', 'y', 'z', 'vx', 'vy', 'vz'] as const) requireFinite(`state.${k}`, state[k]);

  const photometry = input.hMag === null ? undefined : { hMag: input.hMag, g };
  const start = firstObserved.getTime();
  const distanceTimes = Array.from(
    { length: (CLOSE_APPROACH_SEARCH_DAYS * 24) / CLOSE_APPROACH_STEP_H + 1 },
    (_, k) => new Date(start + k * CLOSE_APPROACH_STEP_H * 3_600_000),
  );
  const geo = ensemblePlaces([state], 'geocentre', distanceTimes);
  const minDistanceAu = Math.min(...geo.deltaAu);
  const summary: EstimateSummary = {
    method: 'orbit-block',
    members: 1,
    rangeAu: single(geo.deltaAu[0]!),
    classFractions: orbitClass(state),
    hMag: input.hMag === null ? null : single(input.hMag),
    diameterM: input.hMag === null ? null : (({ minM, maxM }) => ({ min: minM, max: maxM }))(diameterRangeM(input.hMag, ALBEDO_LARGE_END, ALBEDO_SMALL_END)),
    minGeocentricDistance: {
      withinDays: CLOSE_APPROACH_SEARCH_DAYS,
      au: single(minDistanceAu),
      lunarDistances: single(minDistanceAu / AU_PER_LUNAR_DISTANCE),
    },
    closeApproach: minDistanceAu < CLOSE_APPROACH_AU,
    residuals: [],
    rmsArcsec: null,
    notes: [
      `one orbit, no ensemble: assumed 1-sigma uncertainty ${u.majorArcsec} arcsec + ${u.growthArcsecPerH} arcsec/h from ${reference.toISOString()}, axis ratio ${u.axisRatio}, magnitude sigma ${u.magSigma} mag`,
    ],
  };

  const ephemeris = (location: GeodeticLocation, timesUtc: readonly Date[]): EphemerisRow[] => {
    const rows = ephemerisFromState(state, location, timesUtc, photometry ? { photometry } : {});
    return rows.map((row) => {
      const hours = Math.abs(Date.parse(row.t) - reference.getTime()) / 3_600_000;
      const major = u.majorArcsec + u.growthArcsecPerH * hours;
      const paDeg = ((Math.atan2(row.raRate, row.decRate) * 180) / Math.PI + 360) % 180;
      return { ...row, unc: { major, minor: u.axisRatio * major, pa: paDeg }, magSigma: row.mag === null ? null : u.magSigma };
    });
  };
  return { objectId: input.objectId, firstObservedAt: firstObserved.toISOString(), summary, ephemeris };
}

export interface EstimateFromElementsInput extends Omit<EstimateFromStateInput, 'state'> {
  elements: PerihelionElements;
  /** Osculating epoch, TT days since J2000.0. */
  epochTt: number;
}

/** The estimate of perihelion elements osculating at `epochTt` (see estimateFromState). */
export function estimateFromElements(input: EstimateFromElementsInput): ObjectEstimate {
  requireFinite('epochTt', input.epochTt);
  const { elements, epochTt, ...rest } = input;
  return estimateFromState({ ...rest, state: stateFromPerihelionElements(elements, epochTt) });
}
