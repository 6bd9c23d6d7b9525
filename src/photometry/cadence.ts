import { PhotometryInputError, requireNonNegative, requirePositive } from './errors.js';

/**
 * Light-curve cadence from the plausible spin range of an object of a given
 * size. Seconds and metres.
 */

/**
 * The spin barrier, s: bodies larger than about 150-200 m rarely spin faster
 * than about 2.2 h, consistent with cohesionless rubble piles (Pravec & Harris
 * 2000, Icarus 148, 12).
 */
export const SPIN_BARRIER_S = 2.2 * 3600;

/** Diameter above which the spin barrier applies, m (upper end of the 150-200 m transition; Pravec & Harris 2000). */
export const SPIN_BARRIER_DIAMETER_M = 200;

/**
 * Shortest plausible period by the smallest diameter, a planning table (common
 * practice, values from memory of published light curves): decametre bodies are
 * known with periods of tens of seconds, some below 20 s; bodies of 100-200 m
 * spin down to about a minute or two.
 */
export const SHORTEST_PERIOD_BY_DIAMETER: readonly { readonly belowM: number; readonly periodS: number }[] = Object.freeze([
  Object.freeze({ belowM: 30, periodS: 10 }),
  Object.freeze({ belowM: 100, periodS: 30 }),
  Object.freeze({ belowM: SPIN_BARRIER_DIAMETER_M, periodS: 120 }),
]);

/** Longest period the light-curve sequence is planned for, s (24 h; slower rotators need more than one night anyway). */
export const LONGEST_PLANNED_PERIOD_S = 24 * 3600;

export interface SpinRange {
  minPeriodS: number;
  maxPeriodS: number;
  /** Why, in words. */
  basis: string;
}

/**
 * Plausible rotation periods for a diameter range, s. Above SPIN_BARRIER_DIAMETER_M
 * the shortest is the spin barrier (Pravec & Harris 2000); below it the
 * shortest comes from SHORTEST_PERIOD_BY_DIAMETER. The longest: an object wholly
 * below the barrier size is planned for periods up to the barrier (its
 * characteristic fast rotation; slower ones are caught by the window), larger
 * ones up to LONGEST_PLANNED_PERIOD_S.
 */
export function spinPeriodRange(diameterMinM: number, diameterMaxM: number): SpinRange {
  requirePositive('diameterMinM', diameterMinM);
  requirePositive('diameterMaxM', diameterMaxM);
  if (diameterMinM > diameterMaxM) throw new PhotometryInputError('diameterMinM', diameterMinM, `must not exceed diameterMaxM (${diameterMaxM})`);
  const row = SHORTEST_PERIOD_BY_DIAMETER.find((r) => diameterMinM < r.belowM);
  const minPeriodS = row === undefined ? SPIN_BARRIER_S : row.periodS;
  const whollyBelowBarrier = diameterMaxM < SPIN_BARRIER_DIAMETER_M;
  const maxPeriodS = whollyBelowBarrier ? SPIN_BARRIER_S : LONGEST_PLANNED_PERIOD_S;
  const basis =
    row === undefined
      ? `diameter ${Math.round(diameterMinM)}-${Math.round(diameterMaxM)} m is above the spin-barrier size: periods from 2.2 h`
      : `diameter from ${Math.round(diameterMinM)} m can be a fast rotator: periods from ${row.periodS} s`;
  return { minPeriodS, maxPeriodS, basis };
}

/** The rule that each light-curve exposure spans at most a tenth of the shortest period (common practice). */
export const EXPOSURES_PER_SHORTEST_PERIOD = 10;

export interface LightCurveCadence {
  /** Cap on one exposure from the spin range, s. */
  maxExposureS: number;
  /** Exposure + readout + overhead, s. */
  cadenceS: number;
  /** min(2 x longest period, window), s. */
  sequenceS: number;
  /** Frames that fit in the sequence (at least 1). */
  count: number;
}

/**
 * Cadence of a light curve: exposure no longer than a tenth of the shortest
 * plausible period; cadence = exposure + readout + overhead; the sequence covers
 * two cycles of the longest plausible period or the window, whichever is shorter
 * (common practice).
 */
export function lightCurveCadence(spin: SpinRange, exposureS: number, readoutS: number, overheadS: number, windowS: number): LightCurveCadence {
  requirePositive('exposureS', exposureS);
  requireNonNegative('readoutS', readoutS);
  requireNonNegative('overheadS', overheadS);
  requirePositive('windowS', windowS);
  const cadenceS = exposureS + readoutS + overheadS;
  const sequenceS = Math.min(2 * spin.maxPeriodS, windowS);
  return {
    maxExposureS: spin.minPeriodS / EXPOSURES_PER_SHORTEST_PERIOD,
    cadenceS,
    sequenceS,
    count: Math.max(1, Math.floor(sequenceS / cadenceS)),
  };
}

/**
 * Longest rotation period worth planning a light curve for, by the object's likely diameter: a
 * planning prior, not a measurement. Values from memory of the published spin distributions of
 * small near-Earth asteroids (Warner, Harris & Pravec 2009, Icarus 202, 134, the asteroid
 * lightcurve database; Thirouin et al. 2016, AJ 152, 163; Hatch & Wiegert 2015, Planet. Space
 * Sci. 111, 100; the spin barrier of Pravec & Harris 2000, Icarus 148, 12), chosen to cover most
 * bodies of each size, not the rare slow rotators and tumblers (Pravec et al. 2005, Icarus 173, 108):
 * - below 30 m most measured periods are seconds to minutes: half an hour covers nearly all;
 * - 30-100 m: mostly under an hour;
 * - 100-200 m: up to the 2.2 h spin barrier;
 * - larger: rubble piles spinning no faster than 2.2 h, typically a few to ten hours, with a tail
 *   past a day: LONGEST_PLANNED_PERIOD_S.
 */
export const LONGEST_PLAUSIBLE_PERIOD_BY_DIAMETER: readonly { readonly belowM: number; readonly periodS: number; readonly basis: string }[] = Object.freeze([
  Object.freeze({ belowM: 30, periodS: 1800, basis: 'bodies under 30 m mostly spin in seconds to minutes' }),
  Object.freeze({ belowM: 100, periodS: 3600, basis: 'bodies of 30-100 m mostly spin in under an hour' }),
  Object.freeze({ belowM: SPIN_BARRIER_DIAMETER_M, periodS: SPIN_BARRIER_S, basis: 'bodies of 100-200 m mostly spin faster than the 2.2 h spin barrier' }),
  Object.freeze({ belowM: Number.POSITIVE_INFINITY, periodS: LONGEST_PLANNED_PERIOD_S, basis: 'bodies over 200 m spin no faster than 2.2 h and often take many hours' }),
]);

/** Light-curve length bounds a site's config may set (`lightCurve.minMinutes`, `lightCurve.maxMinutes`), minutes. */
export const DEFAULT_LIGHT_CURVE_BOUNDS_MIN = Object.freeze({ minMinutes: 30, maxMinutes: 120 });

/**
 * The likely diameter from a diameter range derived from H and an albedo range, m: their geometric
 * mean, which is the diameter at the geometric-mean albedo (sqrt(0.05 x 0.25) = 0.11 for the
 * estimator's range, near the debiased mean albedo of near-Earth objects, about 0.14, Stuart &
 * Binzel 2004, Icarus 170, 295, from memory). D scales as 1/sqrt(albedo) (Harris & Lagerros 2002).
 */
export function likelyDiameterM(diameterMinM: number, diameterMaxM: number): number {
  requirePositive('diameterMinM', diameterMinM);
  requirePositive('diameterMaxM', diameterMaxM);
  if (diameterMinM > diameterMaxM) throw new PhotometryInputError('diameterMinM', diameterMinM, `must not exceed diameterMaxM (${diameterMaxM})`);
  return Math.sqrt(diameterMinM * diameterMaxM);
}

export interface LightCurveLength {
  /** The diameter the length is sized for, m (null: unknown, sized as the largest class). */
  likelyDiameterM: number | null;
  /** Longest plausible period for that size, s, and why. */
  longestPeriodS: number;
  basis: string;
  /** Two cycles of the longest plausible period, s. */
  wantedS: number;
  /** The first request's length, s: wantedS within the site's bounds. */
  firstS: number;
  /** A follow-on request's length in a later window, s; 0 when the first covers what is wanted. */
  followOnS: number;
  /** The bounds applied, s. */
  minS: number;
  maxS: number;
}

/**
 * How long a light curve is worth taking, s: about two cycles of the longest plausible period for
 * the likely size (LONGEST_PLAUSIBLE_PERIOD_BY_DIAMETER; two cycles is the common-practice minimum
 * to see a period repeat), kept within the site's bounds. When two cycles exceed the upper bound,
 * what is left (within the bounds again) is worth a follow-on request in a later window. Method:
 * table look-up and clamping; no physics beyond the table.
 */
export function lightCurveLength(diameterM: number | null, bounds: { minMinutes: number; maxMinutes: number } = DEFAULT_LIGHT_CURVE_BOUNDS_MIN): LightCurveLength {
  if (diameterM !== null) requirePositive('diameterM', diameterM);
  requirePositive('lightCurve.minMinutes', bounds.minMinutes);
  requirePositive('lightCurve.maxMinutes', bounds.maxMinutes);
  if (bounds.minMinutes > bounds.maxMinutes) throw new PhotometryInputError('lightCurve.minMinutes', bounds.minMinutes, `must not exceed lightCurve.maxMinutes (${bounds.maxMinutes})`);
  const row = LONGEST_PLAUSIBLE_PERIOD_BY_DIAMETER.find((r) => (diameterM ?? Number.POSITIVE_INFINITY) < r.belowM) ?? LONGEST_PLAUSIBLE_PERIOD_BY_DIAMETER[LONGEST_PLAUSIBLE_PERIOD_BY_DIAMETER.length - 1]!;
  const minS = bounds.minMinutes * 60;
  const maxS = bounds.maxMinutes * 60;
  const wantedS = 2 * row.periodS;
  const clamp = (s: number) => Math.min(maxS, Math.max(minS, s));
  const firstS = clamp(wantedS);
  const followOnS = wantedS > maxS ? clamp(wantedS - firstS) : 0;
  return {
    likelyDiameterM: diameterM,
    longestPeriodS: row.periodS,
    basis: diameterM === null ? `size unknown: ${row.basis}` : row.basis,
    wantedS,
    firstS,
    followOnS,
    minS,
    maxS,
  };
}
