import { Body, HelioState, MassProduct } from 'astronomy-engine';
import { astroTimeFromTt } from '../sky/time-scale.js';

/**
 * Positions of the perturbing bodies for the dynamics: the eight planets and
 * the Moon as separate bodies (Earth is the Earth alone, so the Moon's pull
 * is exact at every distance, not only close to Earth), heliocentric, EQJ
 * axes, au. States come from astronomy-engine (VSOP87 for the planets, its
 * lunar theory for the Moon) at nodes spaced `nodeSpacingDays` apart and are
 * interpolated by cubic Hermite polynomials from positions and velocities
 * (error <= h^4/384 max|x''''|: about 1e-12 au for the Moon at 0.125 day).
 * One table is built per propagation call and shared by every orbit in it,
 * or passed in by the caller to serve several calls over the same span
 * (PropagationOptions.perturbers); nothing is cached at module level.
 */

export interface PerturbingBody {
  readonly body: Body;
  /** au^3/day^2 (DE405 via astronomy-engine MassProduct). */
  readonly gm: number;
}

export const PERTURBING_BODIES: readonly PerturbingBody[] = Object.freeze(
  [Body.Mercury, Body.Venus, Body.Earth, Body.Moon, Body.Mars, Body.Jupiter, Body.Saturn, Body.Uranus, Body.Neptune].map((body) =>
    Object.freeze({ body, gm: MassProduct(body) }),
  ),
);

/** Index of the Earth and the Moon in PERTURBING_BODIES (for step control and geometry). */
export const EARTH_INDEX = 2;
export const MOON_INDEX = 3;

const STRIDE = 6; // x, y, z, vx, vy, vz per body per node

/** Per-call table of perturber states with Hermite interpolation between lazily computed nodes. */
export class PerturberTable {
  readonly nodeSpacingDays: number;
  readonly bodyCount = PERTURBING_BODIES.length;
  private readonly nodes = new Map<number, Float64Array>();
  /** How many node states were computed with astronomy-engine (for benchmarks). */
  nodeEvaluations = 0;

  constructor(nodeSpacingDays = 0.125) {
    if (!(nodeSpacingDays > 0) || !Number.isFinite(nodeSpacingDays)) {
      throw new RangeError(`nodeSpacingDays = ${nodeSpacingDays}: expected a finite number greater than 0`);
    }
    this.nodeSpacingDays = nodeSpacingDays;
  }

  private node(index: number): Float64Array {
    const cached = this.nodes.get(index);
    if (cached) return cached;
    const time = astroTimeFromTt(index * this.nodeSpacingDays);
    const data = new Float64Array(this.bodyCount * STRIDE);
    PERTURBING_BODIES.forEach((p, b) => {
      const s = HelioState(p.body, time);
      data.set([s.x, s.y, s.z, s.vx, s.vy, s.vz], b * STRIDE);
    });
    this.nodes.set(index, data);
    this.nodeEvaluations++;
    return data;
  }

  /** Heliocentric EQJ state of one body of PERTURBING_BODIES at TT `tt` (au, au/day), interpolated as statesAt. */
  bodyStateAt(bodyIndex: number, tt: number): { x: number; y: number; z: number; vx: number; vy: number; vz: number } {
    const pos = new Float64Array(3 * this.bodyCount), vel = new Float64Array(3 * this.bodyCount);
    this.statesAt(tt, pos, vel);
    const o = 3 * bodyIndex;
    return { x: pos[o]!, y: pos[o + 1]!, z: pos[o + 2]!, vx: vel[o]!, vy: vel[o + 1]!, vz: vel[o + 2]! };
  }

  /**
   * Writes heliocentric EQJ positions (au) of every perturber at TT `tt` into
   * `positions` (3 per body) and, when given, velocities (au/day) into `velocities`.
   */
  statesAt(tt: number, positions: Float64Array, velocities?: Float64Array): void {
    const h = this.nodeSpacingDays;
    const k = Math.floor(tt / h);
    const a = this.node(k);
    const b = this.node(k + 1);
    const s = tt / h - k;
    const s2 = s * s, s3 = s2 * s;
    const h00 = 2 * s3 - 3 * s2 + 1, h10 = (s3 - 2 * s2 + s) * h, h01 = -2 * s3 + 3 * s2, h11 = (s3 - s2) * h;
    const d00 = (6 * s2 - 6 * s) / h, d10 = 3 * s2 - 4 * s + 1, d01 = (-6 * s2 + 6 * s) / h, d11 = 3 * s2 - 2 * s;
    for (let body = 0; body < this.bodyCount; body++) {
      const o = body * STRIDE;
      for (let axis = 0; axis < 3; axis++) {
        const p0 = a[o + axis]!, v0 = a[o + 3 + axis]!, p1 = b[o + axis]!, v1 = b[o + 3 + axis]!;
        positions[body * 3 + axis] = h00 * p0 + h10 * v0 + h01 * p1 + h11 * v1;
        if (velocities) velocities[body * 3 + axis] = d00 * p0 + d10 * v0 + d01 * p1 + d11 * v1;
      }
    }
  }
}
