import { PhotometryInputError, requireFinite, requireInRange, requireNonNegative, requirePositive } from './errors.js';

/**
 * Signal-to-noise of a point source by the CCD equation and its closed-form
 * inverse for the exposure time. Electrons (e-), seconds, pixels, arcsec.
 *
 * SNR = N* / sqrt(N* + n (1 + n / nB) (N_S + N_D + N_R^2 + G^2 sigma_f^2))
 * (Howell, Handbook of CCD Astronomy, 2nd ed. 2006, eq. 4.4; Merline & Howell
 * 1995, Exp. Astron. 6, 163), with N* the source electrons in the aperture, n
 * the aperture pixels, nB the pixels used to estimate the background, N_S and
 * N_D the sky and dark electrons per pixel, N_R the read noise (e- rms per pixel)
 * and G sigma_f the digitisation noise: gain (e-/ADU) times sigma_f = 1/sqrt(12)
 * ADU for uniform rounding (Merline & Howell 1995).
 */

/** Rates and per-read noise that the CCD equation needs; every rate per second of exposure. */
export interface CcdSignal {
  /** Source electrons per second inside the aperture (aperture loss already applied). */
  sourceEPerS: number;
  /** Sky electrons per second per pixel. */
  skyEPerPixelPerS: number;
  /** Dark electrons per second per pixel. */
  darkEPerPixelPerS: number;
  /** Read noise, e- rms per pixel per read. */
  readNoiseE: number;
  /** Gain, e-/ADU (sets the digitisation noise). */
  gainEPerAdu: number;
  /** Pixels in the photometric aperture (need not be an integer). */
  aperturePixels: number;
  /** Pixels used to estimate the background; Infinity for a perfectly known background. */
  backgroundPixels: number;
}

/** Variance of rounding to whole ADU, ADU^2: sigma_f^2 = 1/12 (Merline & Howell 1995). */
export const DIGITISATION_VARIANCE_ADU2 = 1 / 12;

function checkSignal(signal: CcdSignal): void {
  requirePositive('sourceEPerS', signal.sourceEPerS);
  requireNonNegative('skyEPerPixelPerS', signal.skyEPerPixelPerS);
  requireNonNegative('darkEPerPixelPerS', signal.darkEPerPixelPerS);
  requireNonNegative('readNoiseE', signal.readNoiseE);
  requirePositive('gainEPerAdu', signal.gainEPerAdu);
  requirePositive('aperturePixels', signal.aperturePixels);
  if (!(signal.backgroundPixels > 0)) {
    throw new PhotometryInputError('backgroundPixels', signal.backgroundPixels, 'expected a number greater than 0 (Infinity allowed)');
  }
}

/** Aperture pixels weighted by the background-estimation penalty, n (1 + n/nB). */
function effectivePixels(signal: CcdSignal): number {
  const n = signal.aperturePixels;
  return n * (1 + n / signal.backgroundPixels);
}

/** Per-read variance per pixel, e-^2: N_R^2 + G^2 sigma_f^2. */
function readVarianceE2(signal: CcdSignal): number {
  return signal.readNoiseE ** 2 + signal.gainEPerAdu ** 2 * DIGITISATION_VARIANCE_ADU2;
}

/** The terms of the noise budget for one exposure, e-^2 (variances). */
export interface NoiseBudget {
  signalE: number;
  sourceVarianceE2: number;
  skyVarianceE2: number;
  darkVarianceE2: number;
  readVarianceE2: number;
  snr: number;
}

/**
 * The CCD equation (Howell 2006, eq. 4.4; Merline & Howell 1995) for one
 * exposure of `exposureS` seconds, with every variance term returned.
 */
export function ccdNoiseBudget(signal: CcdSignal, exposureS: number): NoiseBudget {
  checkSignal(signal);
  requirePositive('exposureS', exposureS);
  const n = effectivePixels(signal);
  const signalE = signal.sourceEPerS * exposureS;
  const sky = n * signal.skyEPerPixelPerS * exposureS;
  const dark = n * signal.darkEPerPixelPerS * exposureS;
  const read = n * readVarianceE2(signal);
  return {
    signalE,
    sourceVarianceE2: signalE,
    skyVarianceE2: sky,
    darkVarianceE2: dark,
    readVarianceE2: read,
    snr: signalE / Math.sqrt(signalE + sky + dark + read),
  };
}

/** SNR of one exposure of `exposureS` seconds by the CCD equation. */
export function snrForExposure(signal: CcdSignal, exposureS: number): number {
  return ccdNoiseBudget(signal, exposureS).snr;
}

/**
 * SNR of the sum of `count` equal exposures: sqrt(count) times the SNR of one
 * (each read adds its read noise; Howell 2006, sec. 4.4).
 */
export function snrForStack(signal: CcdSignal, exposureS: number, count: number): number {
  if (!Number.isInteger(count) || count < 1) throw new PhotometryInputError('count', count, 'expected a whole number of at least 1');
  return Math.sqrt(count) * snrForExposure(signal, exposureS);
}

/**
 * Exposure time, s, for one exposure to reach `targetSnr`: the positive root of
 * the CCD equation squared, a quadratic in t:
 * S^2 t^2 - SNR^2 (S + n'(s + d)) t - SNR^2 n' R'^2 = 0, so
 * t = [SNR^2 b + sqrt(SNR^4 b^2 + 4 S^2 SNR^2 n' R'^2)] / (2 S^2), with b = S + n'(s + d),
 * n' = n (1 + n/nB), R'^2 = N_R^2 + G^2/12 (Howell 2006, sec. 4.4 rearranged).
 * With `count` > 1 it is the length of each of `count` exposures whose sum reaches the SNR.
 */
export function exposureForSnr(signal: CcdSignal, targetSnr: number, count = 1): number {
  checkSignal(signal);
  requirePositive('targetSnr', targetSnr);
  if (!Number.isInteger(count) || count < 1) throw new PhotometryInputError('count', count, 'expected a whole number of at least 1');
  const snr2 = (targetSnr * targetSnr) / count;
  const n = effectivePixels(signal);
  const s = signal.sourceEPerS;
  const b = s + n * (signal.skyEPerPixelPerS + signal.darkEPerPixelPerS);
  const c = n * readVarianceE2(signal);
  return (snr2 * b + Math.sqrt(snr2 * snr2 * b * b + 4 * s * s * snr2 * c)) / (2 * s * s);
}

/**
 * Source electrons per second needed to reach `targetSnr` in `count` exposures
 * of `exposureS` seconds each (the CCD equation solved for N*:
 * N* = [SNR^2 + sqrt(SNR^4 + 4 SNR^2 B)] / 2 per stack, B the background variance).
 * Used for limiting magnitudes.
 */
export function sourceRateForSnr(
  background: Omit<CcdSignal, 'sourceEPerS'>,
  targetSnr: number,
  exposureS: number,
  count = 1,
): number {
  checkSignal({ ...background, sourceEPerS: 1 });
  requirePositive('targetSnr', targetSnr);
  requirePositive('exposureS', exposureS);
  if (!Number.isInteger(count) || count < 1) throw new PhotometryInputError('count', count, 'expected a whole number of at least 1');
  const n = effectivePixels({ ...background, sourceEPerS: 1 });
  // For the stack: total signal N t count; total background variance count x (n'(s+d)t + n'R'^2).
  const bg = count * (n * (background.skyEPerPixelPerS + background.darkEPerPixelPerS) * exposureS + n * readVarianceE2({ ...background, sourceEPerS: 1 }));
  const snr2 = targetSnr * targetSnr;
  const totalSignalE = (snr2 + Math.sqrt(snr2 * snr2 + 4 * snr2 * bg)) / 2;
  return totalSignalE / (exposureS * count);
}

/** Which noise term dominates an exposure. */
export type NoiseRegime = 'source-limited' | 'sky-limited' | 'dark-limited' | 'read-noise-limited';

/** The largest of the four variance terms names the regime. */
export function noiseRegime(budget: NoiseBudget): NoiseRegime {
  const terms: [NoiseRegime, number][] = [
    ['source-limited', budget.sourceVarianceE2],
    ['sky-limited', budget.skyVarianceE2],
    ['dark-limited', budget.darkVarianceE2],
    ['read-noise-limited', budget.readVarianceE2],
  ];
  let best = terms[0] as [NoiseRegime, number];
  for (const t of terms) if (t[1] > best[1]) best = t;
  return best[0];
}

// ---- photon rates from magnitudes ----

/**
 * Electrons per second above the atmosphere-corrected zero point:
 * rate = 10^(-0.4 (m + k X - ZP)), ZP the magnitude giving 1 e-/s above the
 * atmosphere, k the extinction in mag per airmass and X the airmass (Bouguer's
 * law; Howell 2006, sec. 5.1).
 */
export function electronRate(mag: number, zeroPointMag: number, extinctionMagPerAirmass: number, airmass: number): number {
  requireFinite('mag', mag);
  requireFinite('zeroPointMag', zeroPointMag);
  requireNonNegative('extinctionMagPerAirmass', extinctionMagPerAirmass);
  requireInRange('airmass', airmass, 1, 40);
  return Math.pow(10, -0.4 * (mag + extinctionMagPerAirmass * airmass - zeroPointMag));
}

/**
 * Sky electrons per second per pixel from a sky surface brightness measured at
 * the ground (no extinction applied): 10^(-0.4 (mu - ZP)) x pixelScale^2.
 */
export function skyRatePerPixel(skyMagPerArcsec2: number, zeroPointMag: number, pixelScaleArcsec: number): number {
  requireInRange('skyMagPerArcsec2', skyMagPerArcsec2, 5, 30);
  requireFinite('zeroPointMag', zeroPointMag);
  requirePositive('pixelScaleArcsec', pixelScaleArcsec);
  return Math.pow(10, -0.4 * (skyMagPerArcsec2 - zeroPointMag)) * pixelScaleArcsec * pixelScaleArcsec;
}

// ---- seeing and apertures ----

/** Gaussian sigma per FWHM: FWHM = 2 sqrt(2 ln 2) sigma. */
export const FWHM_PER_SIGMA = 2 * Math.sqrt(2 * Math.LN2);

/**
 * Seeing FWHM at an airmass, arcsec: FWHM_zenith x X^0.6 (Kolmogorov
 * turbulence, FWHM proportional to sec(z)^(3/5); Roddier 1981, Prog. Optics 19).
 */
export function seeingAtAirmass(zenithFwhmArcsec: number, airmass: number): number {
  requirePositive('zenithFwhmArcsec', zenithFwhmArcsec);
  requireInRange('airmass', airmass, 1, 40);
  return zenithFwhmArcsec * Math.pow(airmass, 0.6);
}

/**
 * Aperture radius per seeing FWHM. r = 1.0 FWHM is near the SNR optimum for
 * faint sources (Howell 1989, PASP 101, 616, finds the optimum close to one
 * FWHM; common practice) and encloses 1 - 2^-4 = 93.75% of a Gaussian.
 */
export const APERTURE_RADIUS_PER_FWHM = 1.0;

/** Fraction of a circular Gaussian within radius r: 1 - exp(-r^2 / (2 sigma^2)) = 1 - 2^(-4 (r/FWHM)^2). */
export function gaussianEnclosedFraction(radiusArcsec: number, fwhmArcsec: number): number {
  requirePositive('radiusArcsec', radiusArcsec);
  requirePositive('fwhmArcsec', fwhmArcsec);
  return 1 - Math.pow(2, -4 * (radiusArcsec / fwhmArcsec) ** 2);
}

/**
 * Error function, |error| < 1.2e-7 everywhere: the Chebyshev-fitted erfc of
 * Press et al., Numerical Recipes (2nd ed. 1992, sec. 6.2, erfcc).
 */
export function erf(x: number): number {
  requireFinite('x', x);
  const z = Math.abs(x);
  const t = 1 / (1 + 0.5 * z);
  const erfc =
    t *
    Math.exp(
      -z * z -
        1.26551223 +
        t * (1.00002368 + t * (0.37409196 + t * (0.09678418 + t * (-0.18628806 + t * (0.27886807 + t * (-1.13520398 + t * (1.48851587 + t * (-0.82215223 + t * 0.17087277)))))))),
    );
  return x >= 0 ? 1 - erfc : erfc - 1;
}

/**
 * Fraction of a Gaussian image falling on the brightest pixel when centred on
 * it: [erf(p / (2 sqrt(2) sigma))]^2 for square pixels of side p (separable
 * Gaussian). The worst case for saturation.
 */
export function peakPixelFraction(fwhmArcsec: number, pixelScaleArcsec: number): number {
  requirePositive('fwhmArcsec', fwhmArcsec);
  requirePositive('pixelScaleArcsec', pixelScaleArcsec);
  const sigma = fwhmArcsec / FWHM_PER_SIGMA;
  return erf(pixelScaleArcsec / (2 * Math.SQRT2 * sigma)) ** 2;
}
