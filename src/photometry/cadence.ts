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
