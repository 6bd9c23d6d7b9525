import type { RequestKind } from '../domain/request-kind.js';
import type { NoiseRegime } from './ccd.js';
import { PhotometryInputError, requireInRange, requireNonNegative, requirePositive } from './errors.js';

/**
 * The inputs every exposure plan takes from the ephemeris and the sky model,
 * and the shapes the plans share.
 */

/** What the telescope will face at the planned time. */
export interface ObservingConditions {
  /** Predicted V magnitude of the object. */
  vMag: number;
  /** Total sky-plane rate, arcsec/s (sqrt(raRate^2 + decRate^2), RA rate times cos Dec). */
  rateArcsecPerS: number;
  /** 1-sigma uncertainty of that rate, arcsec/s: what non-sidereal tracking gets wrong. */
  rateSigmaArcsecPerS: number;
  /** Airmass at the target (1 at zenith). */
  airmass: number;
  /** V sky surface brightness at the target, mag/arcsec^2 (Moon and twilight included). */
  skyVMagPerArcsec2: number;
  /** Plausible diameter range, m (from H and an albedo range); drives the light-curve cadence. */
  diameterRangeM?: { minM: number; maxM: number };
}

/** Checks every field of the conditions and throws PhotometryInputError naming the first bad one. */
export function checkConditions(c: ObservingConditions): void {
  requireInRange('vMag', c.vMag, -30, 40);
  requireNonNegative('rateArcsecPerS', c.rateArcsecPerS);
  requireNonNegative('rateSigmaArcsecPerS', c.rateSigmaArcsecPerS);
  requireInRange('airmass', c.airmass, 1, 40);
  requireInRange('skyVMagPerArcsec2', c.skyVMagPerArcsec2, 5, 30);
  if (c.diameterRangeM !== undefined) {
    requirePositive('diameterRangeM.minM', c.diameterRangeM.minM);
    requirePositive('diameterRangeM.maxM', c.diameterRangeM.maxM);
    if (c.diameterRangeM.minM > c.diameterRangeM.maxM) {
      throw new PhotometryInputError('diameterRangeM.minM', c.diameterRangeM.minM, `must not exceed diameterRangeM.maxM (${c.diameterRangeM.maxM})`);
    }
  }
}

/** The kinds of cap on a single exposure. */
export type ExposureLimitKind =
  | 'tracking smear'
  | 'trailing'
  | 'saturation'
  | 'maximum exposure'
  | 'rotation sampling'
  | 'drift out of slit';

/** One cap on the length of a single exposure, with the numbers behind it in words. */
export interface ExposureLimit {
  kind: ExposureLimitKind;
  maxExposureS: number;
  /** e.g. "rate uncertainty 0.010 arcsec/s x t < FWHM/2 = 0.73 arcsec". */
  detail: string;
}

export type { NoiseRegime };

/** One line of a plan: what to take, how often, and what to expect. */
export interface ExposureStep {
  /** Filter name for imaging steps. */
  filter?: string;
  /** Slit width for spectrum steps, arcsec. */
  slitArcsec?: number;
  exposureS: number;
  count: number;
  /** Expected SNR of one exposure (per resolution element for spectra). */
  snrPerExposure: number;
  /** Expected SNR of the combined exposures of this step (equals snrPerExposure for light-curve frames, which are not combined). */
  snr: number;
  /** The noise term that dominates one exposure. */
  noiseRegime: NoiseRegime;
  /** The cap that bound the exposure length, if one did. */
  boundBy: ExposureLimitKind | null;
  /** In words, e.g. "sky-limited" or "drift out of slit caps exposures at 900 s; 2 exposures stacked". */
  limitingFactor: string;
  /** Every cap that applies to this step, shortest first; exposureS never exceeds any of them. */
  limits: ExposureLimit[];
}

/** A plan that cannot be carried out, with the reason in words and the figures behind it. */
export interface NotFeasible {
  feasible: false;
  kind: RequestKind;
  reason: string;
  figures: Record<string, number>;
}

/** An error thrown when the site's configuration lacks something a plan needs. */
export class PlanConfigError extends Error {
  override readonly name = 'PlanConfigError';
}

/**
 * Total sky-plane rate, arcsec/s, from raRate (already times cos Dec) and
 * decRate: sqrt(raRate^2 + decRate^2) (small-field approximation).
 */
export function skyPlaneRateArcsecPerS(raRate: number, decRate: number): number {
  if (!Number.isFinite(raRate)) throw new PhotometryInputError('raRate', raRate, 'expected a finite number (arcsec/s, times cos Dec)');
  if (!Number.isFinite(decRate)) throw new PhotometryInputError('decRate', decRate, 'expected a finite number (arcsec/s)');
  return Math.hypot(raRate, decRate);
}
