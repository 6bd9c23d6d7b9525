import { describe, expect, it } from 'vitest';
import { createRandom, ellipseDistanceSquared, GAUSSIAN_3SIGMA_CONTENT_2D, skySpread } from '../../../src/orbit/estimation/index.js';
import { offsetArcsec } from '../../../src/orbit/estimation/sky-spread.js';

const RA0 = 150, DEC0 = 20;
const COS = Math.cos((DEC0 * Math.PI) / 180);

/** Members offset from the centre by (east, north) arcsec, as RA/Dec degrees (small offsets; flat-sky to 1e-6 relative). */
function cloud(offsets: [number, number][]): { ra: Float64Array; dec: Float64Array } {
  return {
    ra: Float64Array.from(offsets.map(([e]) => RA0 + e / 3600 / COS)),
    dec: Float64Array.from(offsets.map(([, n]) => DEC0 + n / 3600)),
  };
}

describe('sky-plane spread of virtual orbits', () => {
  it('recovers a Gaussian cloud: sigma 30" x 10" at pa 40 deg (sampling error of 4000 draws, within 4 %)', () => {
    const random = createRandom(5);
    const pa = (40 * Math.PI) / 180;
    const offsets: [number, number][] = Array.from({ length: 4000 }, () => {
      const a = 30 * random.normal(), b = 10 * random.normal();
      return [a * Math.sin(pa) + b * Math.cos(pa), a * Math.cos(pa) - b * Math.sin(pa)];
    });
    const { ra, dec } = cloud(offsets);
    const spread = skySpread(RA0, DEC0, ra, dec, 0, offsets.length);
    expect(spread.sigma.major / 30).toBeCloseTo(1, 1);
    expect(Math.abs(spread.sigma.major / 30 - 1)).toBeLessThan(0.04);
    expect(Math.abs(spread.sigma.minor / 10 - 1)).toBeLessThan(0.04);
    expect(Math.abs(spread.sigma.pa - 40)).toBeLessThan(1);
    expect(Math.abs(spread.coverageScale - 1)).toBeLessThan(0.1);
    // 99 % of a 2-D Gaussian lies inside sqrt(-2 ln 0.01) = 3.035 sigma.
    expect(Math.abs(spread.extent99.major / (3.035 * 30) - 1)).toBeLessThan(0.05);
  });

  it('keeps a long curved cloud honest: 3 x the ellipse encloses 98.9 % of the members', () => {
    const random = createRandom(9);
    const offsets: [number, number][] = Array.from({ length: 2000 }, () => {
      const s = Math.exp(3 * random.normal()); // heavy tail along an arc
      return [200 * Math.sin(s / 50) + random.normal(), 40 * (1 - Math.cos(s / 50)) + random.normal()];
    });
    const { ra, dec } = cloud(offsets);
    const spread = skySpread(RA0, DEC0, ra, dec, 0, offsets.length);
    const inside = offsets.filter(([e, n]) => ellipseDistanceSquared(spread.sigma, e, n) <= 9 * (1 + 1e-9)).length / offsets.length;
    expect(inside).toBeGreaterThanOrEqual(GAUSSIAN_3SIGMA_CONTENT_2D - 0.001);
  });

  /**
   * The ellipse written out with full sorts: second moments about the centre,
   * then twice the second moments of the members inside the 98.89 % ellipse,
   * each shape scaled so 3 x it holds 98.89 % (the ceil(p n)-th smallest squared
   * distance, src/stats' convention), the least area kept.
   */
  function referenceEllipse(projected: readonly (readonly [number, number])[]): { scale: number; major: number } {
    const n = projected.length;
    const shapeOf = (members: readonly (readonly [number, number])[]) => {
      let sxx = 0, sxy = 0, syy = 0;
      for (const [x, y] of members) {
        sxx += x * x;
        sxy += x * y;
        syy += y * y;
      }
      return [sxx / members.length + 1e-6, sxy / members.length, syy / members.length + 1e-6] as const;
    };
    const calibrated = ([a, b, c]: readonly [number, number, number]) => {
      const det = a * c - b * b;
      const d2 = projected.map(([x, y]) => (c * x * x - 2 * b * x * y + a * y * y) / det);
      const covered = [...d2].sort((u, v) => u - v)[Math.ceil(GAUSSIAN_3SIGMA_CONTENT_2D * n) - 1]!;
      const scale = covered / 9;
      const major = Math.sqrt(scale * ((a + c) / 2 + Math.sqrt(((a - c) / 2) ** 2 + b * b)));
      return { d2, covered, scale, major, area: scale * Math.sqrt(det) };
    };
    let current = calibrated(shapeOf(projected));
    let best = current;
    for (let pass = 0; pass < 2; pass++) {
      const inside = projected.filter((_, m) => current.d2[m]! <= current.covered);
      current = calibrated(shapeOf(inside));
      if (current.area < best.area) best = current;
    }
    return best;
  }

  it('sizes and shapes the ellipse as the written-out reference does, for clouds of 10 to 3000 members', () => {
    const random = createRandom(9);
    for (const n of [10, 11, 89, 90, 91, 1000, 1001, 3000]) {
      const offsets: [number, number][] = Array.from({ length: n }, () => [40 * random.normal() + 5 * random.normal() ** 3, 8 * random.normal()]);
      const { ra, dec } = cloud(offsets);
      const spread = skySpread(RA0, DEC0, ra, dec, 0, n);
      const reference = referenceEllipse(offsets.map((_, m) => offsetArcsec(RA0, DEC0, ra[m]!, dec[m]!)));
      expect(spread.coverageScale).toBeCloseTo(reference.scale, 9);
      expect(spread.sigma.major).toBeCloseTo(reference.major, 6);
    }
  });

  it('does not let a heavy tail of a few members stretch the ellipse: shorter than the plain second moments give, still holding 98.89 %', () => {
    const random = createRandom(11);
    // A bulk 100" x 80" and 0.75 % of the members strung out to 20 000" on one side (fewer than the 1.1 % the 3-sigma ellipse may leave out).
    const offsets: [number, number][] = Array.from({ length: 2000 }, (_, m) => (m % 133 === 0 ? [20_000 * random.uniform() + 30 * random.normal(), 30 * random.normal()] : [100 * random.normal(), 80 * random.normal()]));
    const { ra, dec } = cloud(offsets);
    const spread = skySpread(RA0, DEC0, ra, dec, 0, offsets.length);
    const plain = (() => {
      let sxx = 0, sxy = 0, syy = 0;
      for (const [x, y] of offsets) {
        sxx += x * x;
        sxy += x * y;
        syy += y * y;
      }
      sxx /= offsets.length; syy /= offsets.length; sxy /= offsets.length;
      const det = sxx * syy - sxy * sxy;
      const d2 = offsets.map(([x, y]) => (syy * x * x - 2 * sxy * x * y + sxx * y * y) / det).sort((a, b) => a - b);
      const scale = d2[Math.ceil(GAUSSIAN_3SIGMA_CONTENT_2D * offsets.length) - 1]! / 9;
      return Math.sqrt(scale * ((sxx + syy) / 2 + Math.sqrt(((sxx - syy) / 2) ** 2 + sxy * sxy)));
    })();
    expect(spread.sigma.major).toBeLessThan(0.5 * plain);
    const inside = offsets.filter(([e, n]) => ellipseDistanceSquared(spread.sigma, e, n) <= 9 * (1 + 1e-9)).length / offsets.length;
    expect(inside).toBeGreaterThanOrEqual(GAUSSIAN_3SIGMA_CONTENT_2D - 0.001);
  });

  it('measures the position angle east of north: a cloud along +RA has pa 90, along +Dec pa 0', () => {
    const line = (e: number, n: number) => cloud(Array.from({ length: 200 }, (_, k): [number, number] => [(k - 99.5) * e, (k - 99.5) * n]));
    const east = line(1, 0), north = line(0, 1);
    expect(skySpread(RA0, DEC0, east.ra, east.dec, 0, 200).sigma.pa).toBeCloseTo(90, 6);
    const paNorth = skySpread(RA0, DEC0, north.ra, north.dec, 0, 200).sigma.pa;
    expect(Math.min(paNorth, 180 - paNorth)).toBeLessThan(1e-6);
  });

  it('gives a finite ellipse for identical members', () => {
    const same = cloud(Array.from({ length: 50 }, (): [number, number] => [0, 0]));
    const spread = skySpread(RA0, DEC0, same.ra, same.dec, 0, 50);
    expect(Number.isFinite(spread.sigma.major)).toBe(true);
    expect(spread.sigma.major).toBeLessThan(0.01);
  });
});

describe('seeded random numbers', () => {
  it('repeat with a seed and differ between seeds', () => {
    const a = createRandom(42), b = createRandom(42), c = createRandom(43);
    const xs = Array.from({ length: 5 }, () => a.uniform());
    expect(Array.from({ length: 5 }, () => b.uniform())).toEqual(xs);
    expect(Array.from({ length: 5 }, () => c.uniform())).not.toEqual(xs);
  });

  it('give standard normals (mean 0 and variance 1 within 3 standard errors of 20000 draws)', () => {
    const r = createRandom(1);
    const xs = Array.from({ length: 20_000 }, () => r.normal());
    const mean = xs.reduce((s, x) => s + x, 0) / xs.length;
    const variance = xs.reduce((s, x) => s + (x - mean) ** 2, 0) / xs.length;
    expect(Math.abs(mean)).toBeLessThan(3 / Math.sqrt(20_000));
    expect(Math.abs(variance - 1)).toBeLessThan(3 * Math.sqrt(2 / 20_000));
  });
});
