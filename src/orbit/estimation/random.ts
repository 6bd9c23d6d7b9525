/**
 * Seeded pseudo-random numbers for reproducible ensembles. Uniforms by
 * SplitMix32-style mixing of a Weyl sequence (the 32-bit variant of Steele,
 * Lea & Flood 2014, "Fast splittable pseudorandom number generators", OOPSLA);
 * normals by the Box-Muller transform (Box & Muller 1958, Ann. Math. Stat. 29).
 * Each generator is a closure: no state is shared between callers.
 */
export interface RandomSource {
  /** Uniform in [0, 1). */
  uniform(): number;
  /** Standard normal N(0, 1). */
  normal(): number;
}

export function createRandom(seed: number): RandomSource {
  let state = (Math.trunc(seed) ^ 0x9e3779b9) >>> 0;
  let spare: number | null = null;
  const uniform = (): number => {
    state = (state + 0x9e3779b9) >>> 0;
    let z = state;
    z = Math.imul(z ^ (z >>> 16), 0x85ebca6b) >>> 0;
    z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35) >>> 0;
    z = (z ^ (z >>> 16)) >>> 0;
    return z / 4294967296;
  };
  const normal = (): number => {
    if (spare !== null) {
      const s = spare;
      spare = null;
      return s;
    }
    let u = uniform();
    while (u <= 0) u = uniform();
    const v = uniform();
    const radius = Math.sqrt(-2 * Math.log(u));
    spare = radius * Math.sin(2 * Math.PI * v);
    return radius * Math.cos(2 * Math.PI * v);
  };
  return { uniform, normal };
}
