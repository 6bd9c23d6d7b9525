import { describe, expect, it } from 'vitest';
import { median, quantile, quantiles, quantileSorted, systematicResample, upperTail, weightedQuantile } from '../../src/stats/index.js';

// Reference values from NumPy 2.4.6, np.quantile(a, p, method='inverted_cdf') (Hyndman & Fan definition 1), with and
// without weights, computed once with:
//   python3 -c "import numpy as np; a=[3.1,-2.0,7.5,0.25,11.0,4.4,4.4,-6.5,9.0]; w=[1,2,1,3,1,1,2,1,1]; ps=(0,.05,.16,.5,.84,.95,.99,1);
//     print([float(np.quantile(a,p,method='inverted_cdf')) for p in ps]); print([float(np.quantile(a,p,method='inverted_cdf',weights=w)) for p in ps])"
const SAMPLE = [3.1, -2.0, 7.5, 0.25, 11.0, 4.4, 4.4, -6.5, 9.0];
const WEIGHTS = [1, 2, 1, 3, 1, 1, 2, 1, 1];
const PS = [0, 0.05, 0.16, 0.5, 0.84, 0.95, 0.99, 1];
const NUMPY = [-6.5, -6.5, -2.0, 4.4, 9.0, 11.0, 11.0, 11.0];
const NUMPY_WEIGHTED = [-6.5, -6.5, -2.0, 3.1, 7.5, 11.0, 11.0, 11.0];

/** Seeded uniform numbers for the tests (a linear congruential generator, Numerical Recipes' constants). */
function lcg(seed: number): () => number {
  let s = seed >>> 0;
  return () => ((s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32);
}

describe('quantiles (Hyndman & Fan definition 1, the inverse of the empirical distribution)', () => {
  it('agrees with NumPy\'s inverted_cdf on a nine-value sample', () => {
    expect(PS.map((p) => quantile(SAMPLE, p))).toEqual(NUMPY);
  });

  it('takes the lower middle value as the median of an even count (NumPy inverted_cdf: 3)', () => {
    expect(median([10, 7, 4, 3, 2, 1])).toBe(3);
  });

  it('takes the third of ten values as the 0.3 quantile, although 0.3 x 10 rounds above 3 (NumPy inverted_cdf: 3)', () => {
    expect(quantile([1, 2, 3, 4, 5, 6, 7, 8, 9, 10], 0.3)).toBe(3);
  });

  it('takes several quantiles from one sort, the same as one at a time', () => {
    const [a, b, c] = quantiles(SAMPLE, [0.05, 0.5, 0.95] as const);
    expect([a, b, c]).toEqual([quantile(SAMPLE, 0.05), quantile(SAMPLE, 0.5), quantile(SAMPLE, 0.95)]);
  });

  it('reads a sorted array with NaN last by its finite count', () => {
    const sorted = Float64Array.from([...SAMPLE, Number.NaN, Number.NaN]).sort();
    expect(quantileSorted(sorted, 0.84, SAMPLE.length)).toBe(9.0);
  });

  it('answers NaN for no values', () => {
    expect(quantile([], 0.5)).toBeNaN();
    expect(weightedQuantile([], [], 0.5)).toBeNaN();
  });

  it('gives the same upper quantiles from a kept tail as from a full sort, for 1 to 2000 values', () => {
    const next = lcg(3);
    for (const n of [1, 2, 10, 11, 89, 90, 91, 1000, 2000]) {
      const values = Float64Array.from({ length: n }, () => Math.exp(3 * (next() - 0.5)));
      const tail = upperTail(values, 0.95);
      for (const p of [0.95, 0.973, 0.99, 1]) expect(tail.quantile(p)).toBe(quantile(values, p));
    }
  });

  it('refuses a quantile below the kept tail', () => {
    expect(() => upperTail([1, 2, 3], 0.9).quantile(0.5)).toThrow(/tail kept from 0.9/);
  });
});

describe('weighted quantiles', () => {
  it('agrees with NumPy\'s inverted_cdf with weights on a nine-value sample', () => {
    expect(PS.map((p) => weightedQuantile(SAMPLE, WEIGHTS, p))).toEqual(NUMPY_WEIGHTED);
  });

  it('gives the unweighted quantile for equal weights, at every p in steps of 0.001', () => {
    const next = lcg(7);
    const values = Array.from({ length: 37 }, () => next());
    const equal = values.map(() => 0.37);
    for (let k = 0; k <= 1000; k++) expect(weightedQuantile(values, equal, k / 1000)).toBe(quantile(values, k / 1000));
  });

  it('is not pulled towards a value of negligible weight: a tail quantile of one heavy value is that value', () => {
    expect(weightedQuantile([-50, 1, 60], [1e-9, 1, 1e-9], 0.0005)).toBe(1);
    expect(weightedQuantile([-50, 1, 60], [1e-9, 1, 1e-9], 0.9995)).toBe(1);
  });

  it('leaves zero-weight values out', () => {
    expect(weightedQuantile([100, 1, 2, 3], [0, 1, 1, 1], 1)).toBe(3);
  });

  it('refuses negative or non-finite weights, naming the index', () => {
    expect(() => weightedQuantile([1, 2], [1, -1], 0.5)).toThrow(/weight 1 is -1/);
    expect(() => weightedQuantile([1, 2], [Number.NaN, 1], 0.5)).toThrow(/weight 0 is NaN/);
  });
});

describe('systematic resampling (Kitagawa 1996)', () => {
  it('draws each index floor or ceil of count x its weight share times, in order', () => {
    const next = lcg(5);
    const weights = Array.from({ length: 50 }, () => next() ** 3);
    const total = weights.reduce((a, b) => a + b, 0);
    for (let trial = 0; trial < 20; trial++) {
      const picks = systematicResample(weights, 400, next());
      expect(picks).toHaveLength(400);
      expect([...picks].sort((a, b) => a - b)).toEqual(picks);
      weights.forEach((w, j) => {
        const expected = (400 * w) / total;
        const got = picks.filter((i) => i === j).length;
        expect(got).toBeGreaterThanOrEqual(Math.floor(expected - 1e-9));
        expect(got).toBeLessThanOrEqual(Math.ceil(expected + 1e-9));
      });
    }
  });

  it('puts pointers at (u + m) / count of the total weight (worked by hand)', () => {
    // Weights 1, 0, 3 (total 4), 4 draws, u = 0.5: pointers at 0.5, 1.5, 2.5, 3.5 of 4 -> index 0, then 2, 2, 2.
    expect(systematicResample([1, 0, 3], 4, 0.5)).toEqual([0, 2, 2, 2]);
  });

  it('never draws an index of zero weight, even the last one', () => {
    expect(systematicResample([1, 1, 0], 7, 0.999999999)).not.toContain(2);
  });

  it('refuses weights that sum to zero and an offset outside [0, 1)', () => {
    expect(() => systematicResample([0, 0], 3, 0.5)).toThrow(/sum to zero/);
    expect(() => systematicResample([1], 3, 1)).toThrow(/outside \[0, 1\)/);
  });
});
