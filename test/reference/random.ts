/**
 * Seeded random numbers for the reference generator, written for it alone:
 * uniforms by mulberry32 (a 32-bit multiply-xorshift generator in the public
 * domain, T. Ettinger 2017), normals by Marsaglia's polar method (Marsaglia &
 * Bray 1964, SIAM Review 6, 260). Each generator is its own closure.
 */
export interface ReferenceRandom {
  /** Uniform in [0, 1). */
  uniform(): number;
  /** Uniform in [lo, hi). */
  between(lo: number, hi: number): number;
  /** Standard normal. */
  normal(): number;
  /** A unit vector drawn uniformly over the sphere. */
  direction(): [number, number, number];
}

export function referenceRandom(seed: number): ReferenceRandom {
  let a = (Math.trunc(seed) * 2654435761) >>> 0;
  const uniform = (): number => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  let spare: number | null = null;
  const normal = (): number => {
    if (spare !== null) {
      const s = spare;
      spare = null;
      return s;
    }
    for (;;) {
      const u = 2 * uniform() - 1, v = 2 * uniform() - 1;
      const s = u * u + v * v;
      if (s > 0 && s < 1) {
        const f = Math.sqrt((-2 * Math.log(s)) / s);
        spare = v * f;
        return u * f;
      }
    }
  };
  const direction = (): [number, number, number] => {
    for (;;) {
      const x = 2 * uniform() - 1, y = 2 * uniform() - 1, z = 2 * uniform() - 1;
      const n = Math.hypot(x, y, z);
      if (n > 1e-3 && n <= 1) return [x / n, y / n, z / n];
    }
  };
  return { uniform, between: (lo, hi) => lo + (hi - lo) * uniform(), normal, direction };
}
