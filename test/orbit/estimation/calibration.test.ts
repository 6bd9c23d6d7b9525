import { describe, expect, it } from 'vitest';
import { CALIBRATION_HORIZONS_H, evaluateCase, generateCases, type HorizonResult } from '../../../src/orbit/estimation/synthetic.js';

/**
 * A small, fast subset of the calibration (test/bench/estimation.bench.ts runs
 * the full set): the first 3 observable close approachers and the first 3
 * ordinary objects of the generator (independent RK4 truth, invented sites),
 * 300 virtual orbits each, compared with the truth from the follow-up site.
 * The bar is the issue's: truth inside the 3-sigma ellipse at every horizon;
 * the nominal better than linear extrapolation of the tracklet at +24 h
 * (median); the median 1-sigma major axis within a factor 3 of the median
 * error at every horizon, pooled and, over the first six ordinary objects,
 * for ordinary objects alone (the full set meets it for them at 0.9-1.9
 * with the population prior; see docs/accuracy.md). Close approachers alone
 * are not asserted: three cases give too noisy a median.
 */
const median = (xs: number[]): number => {
  const s = [...xs].sort((a, b) => a - b);
  const m = Math.floor(s.length / 2);
  return s.length % 2 ? s[m]! : (s[m - 1]! + s[m]!) / 2;
};

describe('calibration subset', () => {
  const cases = [...generateCases('close', 3, 1), ...generateCases('ordinary', 3, 1)];
  const results: HorizonResult[][] = cases.map((c) => evaluateCase(c, { members: 300, seed: 1 }));
  const at = (hours: number) => results.map((r) => r.find((h) => h.hours === hours)!);

  it('uses six cases, three of each kind', () => {
    expect(cases.map((c) => c.kind)).toEqual(['close', 'close', 'close', 'ordinary', 'ordinary', 'ordinary']);
  });

  it.each(CALIBRATION_HORIZONS_H.map((h) => [h]))('holds the truth inside the 3-sigma ellipse at +%i h in every case', (hours) => {
    for (const r of at(hours)) expect(r.sigmaDistance).toBeLessThanOrEqual(3);
  });

  it('beats linear extrapolation of the tracklet at +24 h (median error)', () => {
    const rows = at(24);
    expect(median(rows.map((r) => r.nominalErrorArcsec))).toBeLessThan(median(rows.map((r) => r.linearErrorArcsec)));
  });

  it.each(CALIBRATION_HORIZONS_H.map((h) => [h]))('keeps the median ellipse within a factor 3 of the median error at +%i h', (hours) => {
    const rows = at(hours);
    const ratio = median(rows.map((r) => r.majorArcsec)) / median(rows.map((r) => r.nominalErrorArcsec));
    expect(ratio).toBeLessThan(3);
    expect(ratio).toBeGreaterThan(1 / 3);
  });

  describe('ordinary objects alone (the first six)', () => {
    const more = generateCases('ordinary', 3, 1 + Math.max(...cases.filter((c) => c.kind === 'ordinary').map((c) => Number(c.id.split('-')[1]))));
    const ordinary = [...results.slice(3), ...more.map((c) => evaluateCase(c, { members: 300, seed: 1 }))];

    it('uses six distinct ordinary cases', () => {
      expect(new Set([...cases.slice(3), ...more].map((c) => c.id)).size).toBe(6);
    });

    it.each(CALIBRATION_HORIZONS_H.map((h) => [h]))('keeps their median ellipse within a factor 3 of their median error at +%i h, with every truth inside 3 sigma', (hours) => {
      const rows = ordinary.map((r) => r.find((h) => h.hours === hours)!);
      const ratio = median(rows.map((r) => r.majorArcsec)) / median(rows.map((r) => r.nominalErrorArcsec));
      expect(ratio).toBeLessThan(3);
      expect(ratio).toBeGreaterThan(1 / 3);
      for (const r of rows) expect(r.sigmaDistance).toBeLessThanOrEqual(3);
    });
  });
});
