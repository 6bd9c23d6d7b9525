import { describe, expect, it } from 'vitest';
import { lightCurveLength, likelyDiameterM } from '../../src/photometry/cadence.js';
import { diameterM } from '../../src/photometry/magnitudes.js';

// The worked examples of docs/scoring.md ("How long a light curve is"), redone by hand there.
describe('light-curve length from the spin prior for the likely size', () => {
  it('takes the geometric mean of the diameter range, the diameter at albedo sqrt(0.05 x 0.25) (D = 1329 km / sqrt(p) x 10^(-H/5))', () => {
    // H 26.49: D = 1329e3 / sqrt(0.25) x 10^(-5.298) = 13.4 m and / sqrt(0.05) = 29.9 m; sqrt(13.4 x 29.9) = 20.0 m.
    const small = diameterM(26.49, 0.25);
    const large = diameterM(26.49, 0.05);
    expect(likelyDiameterM(small, large)).toBeCloseTo(1329e3 / Math.sqrt(Math.sqrt(0.05 * 0.25)) * 10 ** (-26.49 / 5), 6);
    expect(likelyDiameterM(small, large)).toBeCloseTo(20.0, 1);
  });

  it('gives a 20 m object one 60-minute request: two cycles of half an hour', () => {
    expect(lightCurveLength(20)).toMatchObject({ longestPeriodS: 1800, wantedS: 3600, firstS: 3600, followOnS: 0 });
  });

  it('gives a 300 m object 120 minutes now and a 120-minute follow-on later: two cycles of a day do not fit', () => {
    expect(lightCurveLength(300)).toMatchObject({ longestPeriodS: 86_400, wantedS: 172_800, firstS: 7200, followOnS: 7200 });
  });

  it("keeps within the site's bounds", () => {
    expect(lightCurveLength(5, { minMinutes: 75, maxMinutes: 120 }).firstS).toBe(4500);
    // 60 m: two cycles of an hour = 120 min; 45 min now, and the rest (75 min) capped at 45 min for the follow-on.
    expect(lightCurveLength(60, { minMinutes: 30, maxMinutes: 45 })).toMatchObject({ wantedS: 7200, firstS: 2700, followOnS: 2700 });
  });

  it('sizes an object of unknown size as the largest class', () => {
    expect(lightCurveLength(null)).toMatchObject({ longestPeriodS: 86_400, firstS: 7200 });
  });

  it('refuses reversed bounds by name', () => {
    expect(() => lightCurveLength(20, { minMinutes: 90, maxMinutes: 60 })).toThrow(/lightCurve\.minMinutes/);
  });
});
