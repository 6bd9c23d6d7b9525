import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import {
  ccdNoiseBudget,
  electronRate,
  erf,
  exposureForSnr,
  gaussianEnclosedFraction,
  noiseRegime,
  peakPixelFraction,
  seeingAtAirmass,
  snrForExposure,
  snrForStack,
  sourceRateForSnr,
  type CcdSignal,
} from '../../src/photometry/ccd.js';
import { PhotometryInputError } from '../../src/photometry/errors.js';

/** The inputs of the worked example below, as rates per second of a 300-s exposure. */
const WORKED: CcdSignal = {
  sourceEPerS: 24_000 / 300,
  skyEPerPixelPerS: 620 / 300,
  darkEPerPixelPerS: 22 / 3600,
  readNoiseE: 5,
  gainEPerAdu: 5,
  aperturePixels: 20,
  backgroundPixels: Number.POSITIVE_INFINITY,
};

const signalArb = fc.record({
  sourceEPerS: fc.double({ min: 0.01, max: 1e5, noNaN: true }),
  skyEPerPixelPerS: fc.double({ min: 0, max: 1e3, noNaN: true }),
  darkEPerPixelPerS: fc.double({ min: 0, max: 10, noNaN: true }),
  readNoiseE: fc.double({ min: 0, max: 30, noNaN: true }),
  gainEPerAdu: fc.double({ min: 0.1, max: 10, noNaN: true }),
  aperturePixels: fc.double({ min: 1, max: 2000, noNaN: true }),
  backgroundPixels: fc.oneof(fc.constant(Number.POSITIVE_INFINITY), fc.double({ min: 1, max: 1e5, noNaN: true })),
});

describe('the CCD equation (Howell 2006, eq. 4.4; Merline & Howell 1995)', () => {
  it('reproduces a worked example computed by hand term by term', () => {
    // Worked in the manner of Howell (2006), sec. 4.4; the inputs are this test's own.
    // 300 s: N* = 24 000 e-; per pixel: sky 620 e-, dark 22 e-/h x 300 s = 1.8333 e-,
    // read 5^2 = 25 e-^2, digitisation 5^2/12 = 2.0833 e-^2; sum 648.9167 e-^2 per pixel.
    // 20 pixels: 12 978.33; plus N*: 36 978.33; sqrt = 192.2975; SNR = 24 000 / 192.2975 = 124.806.
    expect(snrForExposure(WORKED, 300)).toBeCloseTo(124.806, 2);
  });

  it('adds the background-estimation penalty n (1 + n/nB) of Merline & Howell', () => {
    // nB = 100: 20 x 1.2 x 648.9167 = 15 574.0; + 24 000 = 39 574.0; sqrt = 198.932; SNR = 120.644.
    expect(snrForExposure({ ...WORKED, backgroundPixels: 100 }, 300)).toBeCloseTo(120.644, 2);
  });

  it('reduces to sqrt(N*) for a source with no background (photon-noise limit)', () => {
    const bright: CcdSignal = { ...WORKED, skyEPerPixelPerS: 0, darkEPerPixelPerS: 0, readNoiseE: 0, gainEPerAdu: 1e-6 };
    expect(snrForExposure(bright, 1e4)).toBeCloseTo(Math.sqrt(80 * 1e4), 6);
  });

  it('reports the variance terms that make up the noise', () => {
    const b = ccdNoiseBudget(WORKED, 300);
    expect(b.signalE).toBeCloseTo(24_000, 9);
    expect(b.skyVarianceE2).toBeCloseTo(12_400, 9);
    expect(b.darkVarianceE2).toBeCloseTo(36.6667, 3);
    expect(b.readVarianceE2).toBeCloseTo(20 * (25 + 25 / 12), 9);
    expect(noiseRegime(b)).toBe('source-limited');
  });

  it('rises with exposure time', () => {
    fc.assert(
      fc.property(signalArb, fc.double({ min: 0.01, max: 1e4, noNaN: true }), fc.double({ min: 1.001, max: 100, noNaN: true }), (s, t, f) => {
        expect(snrForExposure(s, t * f)).toBeGreaterThan(snrForExposure(s, t));
      }),
    );
  });

  it('grows as sqrt(count) when equal exposures are summed', () => {
    expect(snrForStack(WORKED, 300, 4)).toBeCloseTo(2 * snrForExposure(WORKED, 300), 9);
  });

  it('rejects a non-finite source rate by name', () => {
    expect(() => snrForExposure({ ...WORKED, sourceEPerS: Number.NaN }, 10)).toThrow(PhotometryInputError);
    expect(() => snrForExposure({ ...WORKED, sourceEPerS: Number.NaN }, 10)).toThrow(/sourceEPerS = NaN/);
    expect(() => snrForExposure(WORKED, 0)).toThrow(/exposureS = 0/);
  });
});

describe('exposure time for a target SNR (closed form)', () => {
  it('is the exact inverse of SNR(t)', () => {
    fc.assert(
      fc.property(signalArb, fc.double({ min: 0.5, max: 500, noNaN: true }), (s, snr) => {
        const t = exposureForSnr(s, snr);
        expect(snrForExposure(s, t) / snr).toBeCloseTo(1, 9);
      }),
    );
  });

  it('gives per-exposure times whose stack reaches the target', () => {
    fc.assert(
      fc.property(signalArb, fc.double({ min: 0.5, max: 500, noNaN: true }), fc.integer({ min: 1, max: 50 }), (s, snr, n) => {
        const t = exposureForSnr(s, snr, n);
        expect(snrForStack(s, t, n) / snr).toBeCloseTo(1, 9);
      }),
    );
  });

  it('returns the worked example exposure for its SNR', () => {
    expect(exposureForSnr(WORKED, 124.806)).toBeCloseTo(300, 0);
  });

  // Scaling laws (common practice): t grows as 10^(0.4 dm) when source-limited and 10^(0.8 dm) when sky-limited.
  it('grows as 10^(0.4 dm) in the source-limited regime', () => {
    const at = (mag: number): CcdSignal => ({ ...WORKED, sourceEPerS: electronRate(mag, 25, 0, 1), skyEPerPixelPerS: 1e-6, darkEPerPixelPerS: 0, readNoiseE: 0, gainEPerAdu: 1e-3 });
    const ratio = exposureForSnr(at(15), 100) / exposureForSnr(at(14), 100);
    expect(ratio / Math.pow(10, 0.4)).toBeCloseTo(1, 3);
  });

  it('grows as 10^(0.8 dm) in the sky-limited regime', () => {
    const at = (mag: number): CcdSignal => ({ ...WORKED, sourceEPerS: electronRate(mag, 25, 0, 1), skyEPerPixelPerS: 1e4, readNoiseE: 0 });
    const ratio = exposureForSnr(at(23), 5) / exposureForSnr(at(22), 5);
    expect(ratio / Math.pow(10, 0.8)).toBeCloseTo(1, 2);
  });

  it('finds the source rate that reaches an SNR (inverse for limiting magnitudes)', () => {
    fc.assert(
      fc.property(signalArb, fc.double({ min: 1, max: 100, noNaN: true }), fc.double({ min: 1, max: 1000, noNaN: true }), fc.integer({ min: 1, max: 20 }), (s, snr, t, n) => {
        const rate = sourceRateForSnr(s, snr, t, n);
        expect(snrForStack({ ...s, sourceEPerS: rate }, t, n) / snr).toBeCloseTo(1, 9);
      }),
    );
  });
});

describe('photon rates, seeing and apertures', () => {
  it('gives 1 e-/s at the zero-point magnitude above the atmosphere', () => {
    expect(electronRate(23.7, 23.7, 0.15, 1) * Math.pow(10, 0.4 * 0.15)).toBeCloseTo(1, 12);
  });

  it('dims by k X magnitudes of extinction (Bouguer)', () => {
    // 10^(-0.4 x 0.15 x 1.2) = 10^-0.072 = 0.84723
    expect(electronRate(20, 20, 0.15, 1.2)).toBeCloseTo(0.84723, 5);
  });

  it('encloses half the light of a Gaussian within half the FWHM, and 1 - 2^-4 within one FWHM', () => {
    expect(gaussianEnclosedFraction(0.5, 1)).toBeCloseTo(0.5, 12);
    expect(gaussianEnclosedFraction(1.3, 1.3)).toBeCloseTo(0.9375, 12);
  });

  it('broadens the seeing as airmass^0.6 (Kolmogorov)', () => {
    // 2^0.6 = 1.515717
    expect(seeingAtAirmass(1, 2)).toBeCloseTo(1.515717, 6);
  });

  it('puts p^2 / (2 pi sigma^2) of a Gaussian on a small centred pixel', () => {
    const fwhm = 10;
    const sigma = fwhm / 2.354820045;
    expect(peakPixelFraction(fwhm, 0.1) / (0.01 / (2 * Math.PI * sigma * sigma))).toBeCloseTo(1, 3);
    expect(peakPixelFraction(1, 100)).toBeCloseTo(1, 9);
  });

  it('computes erf to the tabulated values (Abramowitz & Stegun, table 7.1)', () => {
    expect(erf(0.5)).toBeCloseTo(0.5204998778, 6);
    expect(erf(1)).toBeCloseTo(0.8427007929, 6);
    expect(erf(2)).toBeCloseTo(0.9953222650, 6);
    expect(erf(-1)).toBeCloseTo(-0.8427007929, 6);
  });
});
