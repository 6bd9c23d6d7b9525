import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import {
  DEFAULT_BAND_OFFSETS,
  absoluteMagnitudeFromObserved,
  apparentMagnitudeHG,
  apparentMagnitudeHG12,
  apparentMagnitudesHG,
  diameterM,
  g1g2FromG12,
  magnitudeInBand,
  phaseFunctionsHG,
  phaseFunctionsHG1G2,
  phaseFunctionsHGFull,
  phaseTermHG,
} from '../../src/photometry/magnitudes.js';
import { PhotometryInputError } from '../../src/photometry/errors.js';

describe('IAU H-G magnitudes (Bowell et al. 1989)', () => {
  it('at zero phase gives V = H + 5 log10(r Delta)', () => {
    // 5 log10(1.2 x 0.3) = 5 x (-0.443697) = -2.218487
    expect(apparentMagnitudeHG(20, 0.15, 1.2, 0.3, 0)).toBeCloseTo(17.781513, 6);
  });

  it('has both phase functions equal to 1 at zero phase', () => {
    const { phi1, phi2 } = phaseFunctionsHG(0);
    expect(phi1).toBe(1);
    expect(phi2).toBe(1);
  });

  it('matches a hand computation of the published exponential forms at 20 deg', () => {
    // tan(10 deg) = 0.176327; Phi1 = exp(-3.33 x 0.176327^0.63) = exp(-3.33 x 0.335103) = 0.32762;
    // Phi2 = exp(-1.87 x 0.176327^1.22) = exp(-1.87 x 0.120380) = 0.79845 (by hand, to 5 decimals).
    const { phi1, phi2 } = phaseFunctionsHG(20);
    expect(phi1).toBeCloseTo(0.32762, 5);
    expect(phi2).toBeCloseTo(0.79845, 5);
  });

  it('gives the usual fading of about 1.0 mag at 20 deg for G = 0.15', () => {
    // -2.5 log10(0.85 x 0.32762 + 0.15 x 0.79845) = -2.5 log10(0.398244) = 1.0000 (hand computation)
    expect(phaseTermHG(0.15, 20)).toBeCloseTo(1.0, 3);
  });

  it('agrees with the full Bowell et al. form within 0.04 mag from 0 to 120 deg at G = 0.15', () => {
    for (let phaseDeg = 0; phaseDeg <= 120; phaseDeg += 1) {
      const approx = phaseFunctionsHG(phaseDeg);
      const full = phaseFunctionsHGFull(phaseDeg);
      const dm = -2.5 * Math.log10((0.85 * approx.phi1 + 0.15 * approx.phi2) / (0.85 * full.phi1 + 0.15 * full.phi2));
      expect(Math.abs(dm)).toBeLessThan(0.04);
    }
  });

  it('fades monotonically with phase angle for G in 0..0.5', () => {
    fc.assert(
      fc.property(fc.double({ min: 0, max: 0.5, noNaN: true }), fc.double({ min: 0, max: 150, noNaN: true }), fc.double({ min: 0.01, max: 20, noNaN: true }), (g, a, da) => {
        expect(phaseTermHG(g, a + da)).toBeGreaterThan(phaseTermHG(g, a));
      }),
    );
  });

  it('recovers H from the magnitude it predicts (inverse round trip)', () => {
    fc.assert(
      fc.property(
        fc.double({ min: 10, max: 32, noNaN: true }),
        fc.double({ min: -0.1, max: 0.6, noNaN: true }),
        fc.double({ min: 0.5, max: 5, noNaN: true }),
        fc.double({ min: 1e-4, max: 4, noNaN: true }),
        fc.double({ min: 0, max: 150, noNaN: true }),
        (h, g, r, delta, phase) => {
          const v = apparentMagnitudeHG(h, g, r, delta, phase);
          expect(absoluteMagnitudeFromObserved(v, g, r, delta, phase)).toBeCloseTo(h, 9);
        },
      ),
    );
  });

  it('reduces a magnitude in another band to V with the colour table before solving for H', () => {
    const rMag = 18 + DEFAULT_BAND_OFFSETS['r']!;
    expect(absoluteMagnitudeFromObserved(rMag, 0.15, 1, 1, 0, { band: 'r' })).toBeCloseTo(18, 12);
  });

  it('names the field and value of bad geometry', () => {
    expect(() => apparentMagnitudeHG(20, 0.15, Number.NaN, 1, 10)).toThrow(PhotometryInputError);
    expect(() => apparentMagnitudeHG(20, 0.15, Number.NaN, 1, 10)).toThrow(/rAu.*NaN.*finite/);
    expect(() => apparentMagnitudeHG(20, 0.15, 1, -1, 10)).toThrow(/deltaAu/);
    expect(() => apparentMagnitudeHG(20, 0.15, 1, 1, 180)).toThrow(/phaseDeg.* = 180: expected a number from 0 to 179.9/);
  });

  it('gives the same magnitudes for a whole ensemble as one member at a time, to 1e-12 mag', () => {
    const h = [18, 20.5, 24, 27.3];
    // Geometry arrays laid out as an ensemble's: two leading values that belong to another time.
    const r = [9, 9, 1.02, 1.3, 2.4, 0.98], delta = [9, 9, 0.01, 0.4, 1.5, 0.002], phase = [9, 9, 60, 30, 5, 110];
    const out = new Float64Array(4);
    expect(apparentMagnitudesHG(h, 0.15, r, delta, phase, 2, 4, out)).toBe(4);
    h.forEach((hm, m) => expect(Math.abs(out[m]! - apparentMagnitudeHG(hm, 0.15, r[2 + m]!, delta[2 + m]!, phase[2 + m]!))).toBeLessThan(1e-12));
  });

  it('marks an ensemble member outside the phase range or without H as NaN instead of failing', () => {
    const out = new Float64Array(3);
    expect(apparentMagnitudesHG([20, Number.NaN, 20], 0.15, [1, 1, 1], [1, 1, 1], [10, 10, 179.95], 0, 3, out)).toBe(1);
    expect(Number.isNaN(out[1]!) && Number.isNaN(out[2]!)).toBe(true);
    expect(() => apparentMagnitudesHG([20], 2, [1], [1], [10], 0, 1, out)).toThrow(/g \(H-G slope parameter\)/);
  });
});

describe('H, G12 magnitudes (Muinonen et al. 2010)', () => {
  it('passes through the published nodes', () => {
    // Node values of Muinonen et al. (2010), appendix tables.
    expect(phaseFunctionsHG1G2(30).phi1).toBeCloseTo(0.33486016, 7);
    expect(phaseFunctionsHG1G2(60).phi2).toBeCloseTo(0.31755495, 7);
    expect(phaseFunctionsHG1G2(1).phi3).toBeCloseTo(0.57735424, 7);
    expect(phaseFunctionsHG1G2(8).phi3).toBeCloseTo(0.10348178, 7);
  });

  it('has the published derivatives at the nodes (per radian)', () => {
    const slope = (f: (a: number) => number, aDeg: number): number => (f(aDeg + 1e-4) - f(aDeg - 1e-4)) / ((2e-4 * Math.PI) / 180);
    expect(slope((a) => phaseFunctionsHG1G2(a).phi1, 30)).toBeCloseTo(-5.5463432e-1, 4);
    expect(slope((a) => phaseFunctionsHG1G2(a).phi2, 90)).toBeCloseTo(-2.8071809e-1, 4);
    expect(slope((a) => phaseFunctionsHG1G2(a).phi3, 4)).toBeCloseTo(-3.696095, 3);
  });

  it('reaches the last published node at 150 deg', () => {
    expect(phaseFunctionsHG1G2(150).phi1).toBeCloseTo(3.6396989e-3, 9);
    expect(phaseFunctionsHG1G2(150).phi2).toBeCloseTo(1.6505689e-4, 9);
  });

  it('joins the linear part of Phi1 and Phi2 continuously at 7.5 deg', () => {
    const below = phaseFunctionsHG1G2(7.5 - 1e-9);
    const above = phaseFunctionsHG1G2(7.5 + 1e-9);
    expect(below.phi1).toBeCloseTo(0.75, 7);
    expect(above.phi1).toBeCloseTo(0.75, 7);
    expect(below.phi2).toBeCloseTo(0.925, 7);
    expect(above.phi2).toBeCloseTo(0.925, 7);
  });

  it('has G1 and G2 continuous where the G12 relation changes branch at 0.2', () => {
    const lo = g1g2FromG12(0.2 - 1e-12);
    const hi = g1g2FromG12(0.2);
    expect(Math.abs(lo.g1 - hi.g1)).toBeLessThan(1e-3);
    expect(Math.abs(lo.g2 - hi.g2)).toBeLessThan(1e-3);
  });

  it('gives V = H + 5 log10(r Delta) at zero phase', () => {
    expect(apparentMagnitudeHG12(20, 0.5, 1.2, 0.3, 0)).toBeCloseTo(17.781513, 6);
  });

  it('stays within 0.15 mag of H-G (G = 0.15) for a typical G12 = 0.5 between 5 and 60 deg', () => {
    // Loose agreement expected: the two systems are fitted to the same kind of phase curves.
    for (let a = 5; a <= 60; a += 5) {
      const dm = apparentMagnitudeHG12(0, 0.5, 1, 1, a) - apparentMagnitudeHG(0, 0.15, 1, 1, a);
      expect(Math.abs(dm)).toBeLessThan(0.15);
    }
  });
});

describe('band offsets from V', () => {
  it('adds the mean colour of the band', () => {
    expect(magnitudeInBand(18, 'V')).toBe(18);
    expect(magnitudeInBand(18, 'r')).toBeCloseTo(18 + DEFAULT_BAND_OFFSETS['r']!, 12);
  });

  it('takes a caller table over the defaults', () => {
    expect(magnitudeInBand(18, 'w', { w: -0.1 })).toBeCloseTo(17.9, 12);
  });

  it('rejects a band it has no colour for, listing the known bands', () => {
    expect(() => magnitudeInBand(18, 'Y')).toThrow(/band = Y.*known bands: V, B/);
  });
});

describe('diameter from H and albedo (Pravec & Harris 2007, eq. 3)', () => {
  it('gives about 140 m for H = 22 at albedo 0.14 (the survey size benchmark, common practice)', () => {
    // 1329 km / sqrt(0.14) x 10^-4.4 = 3551.9 km x 3.98107e-5 = 0.14140 km
    expect(diameterM(22, 0.14)).toBeCloseTo(141.4, 1);
  });

  it('gives 1 km for H = 17.75 at albedo 0.14 (common practice)', () => {
    expect(diameterM(17.75, 0.14)).toBeGreaterThan(995);
    expect(diameterM(17.75, 0.14)).toBeLessThan(1005);
  });

  it('halves the diameter for a fourfold albedo', () => {
    expect(diameterM(20, 0.4) / diameterM(20, 0.1)).toBeCloseTo(0.5, 12);
  });

  it('rejects a zero albedo', () => {
    expect(() => diameterM(20, 0)).toThrow(/albedo/);
  });
});
