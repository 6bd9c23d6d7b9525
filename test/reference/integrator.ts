import { BODY_GM, bodyPositions } from './solar-system.js';

/**
 * The reference integrator: Gragg-Bulirsch-Stoer extrapolation (Gragg's
 * modified midpoint rule, polynomial extrapolation in h^2 by Neville's scheme;
 * Bulirsch & Stoer 1966, Numer. Math. 8, 1; Hairer, Norsett & Wanner,
 * Solving ODEs I, 2nd ed., sect. II.9), with the step-number sequence
 * 2, 4, 6, ... 16 (Deuflhard's), adaptive step: a step is accepted when two
 * successive extrapolation columns agree in position to `tolAu` (and in
 * velocity times one day), otherwise it is halved. A different method from
 * the project's fixed-step Runge-Kutta on purpose. Forces: barycentric point
 * masses (solar-system.ts), every body evaluated at every substep time (the
 * bodies at one time are cached, since the midpoint sequences share times).
 */
const SEQUENCE = [2, 4, 6, 8, 10, 12, 14, 16] as const;
export const DEFAULT_TOLERANCE_AU = 1e-13;
export const DEFAULT_MAX_STEP_DAYS = 1;

export type State6 = Float64Array; // x, y, z (au), vx, vy, vz (au/day), barycentric EQJ

export interface IntegratorSettings {
  readonly tolAu: number;
  readonly maxStepDays: number;
}

/** Derivative of a state under the point masses at positions `bodies`. */
function derivative(bodies: Float64Array, y: State6, out: Float64Array): void {
  out[0] = y[3]!; out[1] = y[4]!; out[2] = y[5]!;
  let ax = 0, ay = 0, az = 0;
  for (let b = 0; b < BODY_GM.length; b++) {
    const dx = bodies[3 * b]! - y[0]!, dy = bodies[3 * b + 1]! - y[1]!, dz = bodies[3 * b + 2]! - y[2]!;
    const d2 = dx * dx + dy * dy + dz * dz;
    const f = BODY_GM[b]! / (d2 * Math.sqrt(d2));
    ax += f * dx; ay += f * dy; az += f * dz;
  }
  out[3] = ax; out[4] = ay; out[5] = az;
}

/** Memo of body positions by exact time (the midpoint sequences of one step share many times). */
class BodyCache {
  private readonly map = new Map<number, Float64Array>();
  at(tt: number): Float64Array {
    let b = this.map.get(tt);
    if (!b) {
      if (this.map.size > 4096) this.map.clear();
      b = bodyPositions(tt);
      this.map.set(tt, b);
    }
    return b;
  }
}

/** Gragg's modified midpoint rule over [t0, t0 + H] in n substeps. */
function modifiedMidpoint(cache: BodyCache, t0: number, y0: State6, dy0: Float64Array, H: number, n: number): Float64Array {
  const h = H / n;
  let zPrev = Float64Array.from(y0);
  let z = new Float64Array(6);
  for (let i = 0; i < 6; i++) z[i] = y0[i]! + h * dy0[i]!;
  const d = new Float64Array(6);
  for (let m = 1; m < n; m++) {
    derivative(cache.at(t0 + H * (m / n)), z, d);
    const next = new Float64Array(6);
    for (let i = 0; i < 6; i++) next[i] = zPrev[i]! + 2 * h * d[i]!;
    zPrev = z;
    z = next;
  }
  derivative(cache.at(t0 + H), z, d);
  const out = new Float64Array(6);
  for (let i = 0; i < 6; i++) out[i] = 0.5 * (zPrev[i]! + z[i]! + h * d[i]!);
  return out;
}

/**
 * One extrapolated step of size H from (t0, y0); null when the columns do not
 * agree to the tolerance by the last of SEQUENCE. Also returns the column at
 * which it converged, for the step-size control.
 */
function gbsStep(cache: BodyCache, t0: number, y0: State6, H: number, tolAu: number): { y: State6; column: number } | null {
  const dy0 = new Float64Array(6);
  derivative(cache.at(t0), y0, dy0);
  const table: Float64Array[] = [];
  for (let k = 0; k < SEQUENCE.length; k++) {
    const row: Float64Array[] = [modifiedMidpoint(cache, t0, y0, dy0, H, SEQUENCE[k]!)];
    for (let j = 1; j <= k; j++) {
      const ratio = (SEQUENCE[k]! / SEQUENCE[k - j]!) ** 2 - 1;
      const prev = row[j - 1]!, above = table[j - 1]!;
      const t = new Float64Array(6);
      for (let i = 0; i < 6; i++) t[i] = prev[i]! + (prev[i]! - above[i]!) / ratio;
      row.push(t);
    }
    if (k >= 2) {
      const a = row[k]!, b = row[k - 1]!;
      let err = 0;
      for (let i = 0; i < 3; i++) err = Math.max(err, Math.abs(a[i]! - b[i]!), Math.abs(a[i + 3]! - b[i + 3]!));
      if (err <= tolAu) return { y: a, column: k };
    }
    table.splice(0, table.length, ...row);
  }
  return null;
}

/** Integrates a state from t0 to t1 (either direction), adaptive GBS steps; calls `visit` at every accepted step end. */
export function integrate(t0: number, y0: State6, t1: number, settings: IntegratorSettings, visit?: (t: number, y: State6, stepDays: number) => void, initialStep?: number): { y: State6; lastStep: number } {
  const cache = new BodyCache();
  const direction = t1 >= t0 ? 1 : -1;
  let t = t0;
  let y: State6 = Float64Array.from(y0);
  let H = Math.min(initialStep ?? 0.1, settings.maxStepDays);
  let lastStep = H;
  let guard = 0;
  while ((t1 - t) * direction > 0) {
    if (++guard > 1_000_000) throw new Error('reference integrator: too many steps');
    const remaining = Math.abs(t1 - t);
    const last = H >= remaining;
    const step = last ? remaining : H;
    const result = gbsStep(cache, t, y, direction * step, settings.tolAu);
    if (result === null) {
      H = step / 2;
      if (H < 1e-9) throw new Error(`reference integrator: step underflow at tt ${t}`);
      continue;
    }
    t = last ? t1 : t + direction * step;
    y = result.y;
    lastStep = step;
    visit?.(t, y, step);
    const grow = result.column <= 3 ? 1.5 : result.column >= 6 ? 0.6 : 1;
    if (!last) H = Math.min(step * grow, settings.maxStepDays);
  }
  return { y, lastStep };
}

/**
 * A truth trajectory: the state at any TT, by integration from the nearest
 * state already reached (every accepted step end is kept), so clustered
 * queries are cheap.
 */
export class Trajectory {
  private readonly times: number[] = [];
  private readonly states: State6[] = [];
  private readonly steps: number[] = [];

  constructor(epochTt: number, state: State6, readonly settings: IntegratorSettings = { tolAu: DEFAULT_TOLERANCE_AU, maxStepDays: DEFAULT_MAX_STEP_DAYS }) {
    this.insert(epochTt, state, 0.05);
  }

  private insert(t: number, y: State6, step: number): void {
    let lo = 0, hi = this.times.length;
    while (lo < hi) {
      const mid = (lo + hi) >> 1;
      if (this.times[mid]! < t) lo = mid + 1;
      else hi = mid;
    }
    if (this.times[lo] === t) return;
    this.times.splice(lo, 0, t);
    this.states.splice(lo, 0, y);
    this.steps.splice(lo, 0, step);
  }

  private nearest(t: number): number {
    let best = 0;
    let lo = 0, hi = this.times.length - 1;
    while (lo <= hi) {
      const mid = (lo + hi) >> 1;
      if (this.times[mid]! < t) lo = mid + 1;
      else hi = mid - 1;
    }
    for (const k of [lo - 1, lo]) if (k >= 0 && k < this.times.length && Math.abs(this.times[k]! - t) < Math.abs(this.times[best]! - t)) best = k;
    return best;
  }

  /** Barycentric EQJ state (au, au/day) at TT `tt` (days since J2000.0). */
  stateAt(tt: number): State6 {
    const k = this.nearest(tt);
    if (this.times[k] === tt) return this.states[k]!;
    const { y } = integrate(this.times[k]!, this.states[k]!, tt, this.settings, (t, s, step) => this.insert(t, s, step), Math.max(this.steps[k]!, 1e-3));
    return y;
  }
}
