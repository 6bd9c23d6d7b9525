import type { Body } from 'astronomy-engine';
import { GM_SUN_AU3_PER_DAY2 } from './constants.js';
import type { HeliocentricState } from './elements.js';
import { OrbitConvergenceError, OrbitInputError, requireFinite, requirePositive } from './errors.js';
import { PERTURBING_BODIES, PerturberTable } from './perturbers.js';

/**
 * Perturbed heliocentric propagation of many orbits at once.
 *
 * Force model: point masses of the Sun, the eight planets and the Moon
 * (Earth and Moon separately), heliocentric frame with the indirect term,
 * a = -GM_S r/|r|^3 + sum_p GM_p [(r_p - r)/|r_p - r|^3 - r_p/|r_p|^3]
 * (the heliocentric equations of motion of Murray & Dermott, Solar System
 * Dynamics, 1999, ch. 6; chapter from memory). Not modelled:
 * relativity, asteroid masses, Earth's oblateness, non-gravitational forces.
 *
 * Method: classical fourth-order Runge-Kutta over Float64Arrays, one step size
 * shared by the whole ensemble and chosen before each step as
 * h = eta x min over members and bodies of the body's time scale
 * (Sun: sqrt(r^3/GM); each planet and the Moon: min(d/|v_rel|, sqrt(d^3/GM))),
 * capped at maxStepDays. Perturber positions come from one PerturberTable per
 * call (three look-ups per step shared by all members). States at the
 * requested times are cubic Hermite interpolants between step ends. Error
 * measured by step halving is in docs/accuracy.md.
 */

export interface PropagationOptions {
  /** Fraction of the shortest dynamical time scale per step; default 0.02. */
  readonly stepFraction?: number;
  /** Longest step, days; default 1. */
  readonly maxStepDays?: number;
  /** Shortest step, days (stops runaway refinement at an impact); default 1e-5 (0.9 s). */
  readonly minStepDays?: number;
  /** Perturber table node spacing, days; default 0.125. */
  readonly perturberNodeDays?: number;
  /**
   * A perturber table to reuse, so several calls over the same span (batches of
   * one ensemble) compute each node once; its own spacing is used. Default: a
   * new table per call.
   */
  readonly perturbers?: PerturberTable;
  /** Bodies left out of the force model, e.g. the planet whose own orbit a test particle follows. */
  readonly omitBodies?: readonly Body[];
}

/** States of every member at every requested time; index (timeIndex * memberCount + member) * 3 + axis. */
export interface EnsembleTrajectory {
  /** TT days since J2000.0, in the order requested. */
  readonly timesTt: Float64Array;
  readonly memberCount: number;
  /** Heliocentric EQJ positions, au. */
  readonly positionsAu: Float64Array;
  /** Heliocentric EQJ velocities, au/day. */
  readonly velocitiesAuPerDay: Float64Array;
  /** Integration steps taken (both directions) and perturber nodes computed. */
  readonly stepCount: number;
  readonly perturberNodeCount: number;
}

const BODY_COUNT = PERTURBING_BODIES.length;

/** Accelerations (au/day^2) of n test particles at positions `r` given perturber positions `body` (3 per body). */
function accelerate(n: number, r: Float64Array, body: Float64Array, gms: Float64Array, out: Float64Array): void {
  // Indirect term: the Sun's own acceleration towards each body, common to all members.
  let ix = 0, iy = 0, iz = 0;
  for (let b = 0; b < BODY_COUNT; b++) {
    const gm = gms[b]!;
    if (gm === 0) continue;
    const bx = body[3 * b]!, by = body[3 * b + 1]!, bz = body[3 * b + 2]!;
    const d2 = bx * bx + by * by + bz * bz;
    const k = gm / (d2 * Math.sqrt(d2));
    ix -= k * bx; iy -= k * by; iz -= k * bz;
  }
  for (let i = 0; i < n; i++) {
    const x = r[3 * i]!, y = r[3 * i + 1]!, z = r[3 * i + 2]!;
    const r2 = x * x + y * y + z * z;
    const ks = -GM_SUN_AU3_PER_DAY2 / (r2 * Math.sqrt(r2));
    let ax = ks * x + ix, ay = ks * y + iy, az = ks * z + iz;
    for (let b = 0; b < BODY_COUNT; b++) {
      const gm = gms[b]!;
      if (gm === 0) continue;
      const dx = body[3 * b]! - x, dy = body[3 * b + 1]! - y, dz = body[3 * b + 2]! - z;
      const d2 = dx * dx + dy * dy + dz * dz;
      const k = gm / (d2 * Math.sqrt(d2));
      ax += k * dx; ay += k * dy; az += k * dz;
    }
    out[3 * i] = ax; out[3 * i + 1] = ay; out[3 * i + 2] = az;
  }
}

/** Largest step (days) that keeps every member within `stepFraction` of its shortest time scale. */
function stepLimit(n: number, r: Float64Array, v: Float64Array, bodyR: Float64Array, bodyV: Float64Array, gms: Float64Array, fraction: number, maxStep: number): number {
  let tauMin = maxStep / fraction;
  for (let i = 0; i < n; i++) {
    const x = r[3 * i]!, y = r[3 * i + 1]!, z = r[3 * i + 2]!;
    const r2 = x * x + y * y + z * z;
    const tauSun = Math.sqrt((r2 * Math.sqrt(r2)) / GM_SUN_AU3_PER_DAY2);
    if (tauSun < tauMin) tauMin = tauSun;
    for (let b = 0; b < BODY_COUNT; b++) {
      if (gms[b] === 0) continue;
      const dx = x - bodyR[3 * b]!, dy = y - bodyR[3 * b + 1]!, dz = z - bodyR[3 * b + 2]!;
      const d2 = dx * dx + dy * dy + dz * dz;
      const d = Math.sqrt(d2);
      const tauFall = Math.sqrt((d2 * d) / gms[b]!);
      const wx = v[3 * i]! - bodyV[3 * b]!, wy = v[3 * i + 1]! - bodyV[3 * b + 1]!, wz = v[3 * i + 2]! - bodyV[3 * b + 2]!;
      const tauPass = d / Math.sqrt(wx * wx + wy * wy + wz * wz);
      const tau = tauPass < tauFall ? tauPass : tauFall;
      if (tau < tauMin) tauMin = tau;
    }
  }
  return fraction * tauMin;
}

/**
 * Propagates every state (all at one epoch, heliocentric EQJ, au and au/day)
 * to each of `timesTt` (TT days since J2000.0; any order, before or after the
 * epoch) under the force model above. One perturber table serves all members.
 */
export function propagateEnsemble(states: readonly HeliocentricState[], timesTt: readonly number[], options: PropagationOptions = {}): EnsembleTrajectory {
  const size = 3 * states.length;
  const positions = new Float64Array(timesTt.length * size);
  const velocities = new Float64Array(timesTt.length * size);
  const counts = streamEnsemble(
    states,
    timesTt,
    (k, p, v) => {
      positions.set(p, k * size);
      velocities.set(v, k * size);
    },
    options,
  );
  return {
    timesTt: Float64Array.from(timesTt),
    memberCount: states.length,
    positionsAu: positions,
    velocitiesAuPerDay: velocities,
    ...counts,
  };
}

/**
 * Receives the states of all members at one requested time: `timeIndex` into the
 * requested times, positions (au) and velocities (au/day) as x, y, z per member.
 * The arrays are reused for the next time: copy what must outlive the call.
 */
export type EnsembleStateSink = (timeIndex: number, positionsAu: Float64Array, velocitiesAuPerDay: Float64Array) => void;

/**
 * propagateEnsemble without materialising every state: hands each requested
 * time's states to `sink` as soon as they are known (times at or after the
 * epoch in increasing order, then earlier times in decreasing order), so memory
 * stays at a few arrays of 3 x members whatever the number of times.
 */
export function streamEnsemble(
  states: readonly HeliocentricState[],
  timesTt: readonly number[],
  sink: EnsembleStateSink,
  options: PropagationOptions = {},
): { stepCount: number; perturberNodeCount: number } {
  const n = states.length;
  if (n === 0) throw new OrbitInputError('states', '[]', 'expected at least one state');
  const epoch = states[0]!.tt;
  requireFinite('states[0].tt', epoch);
  states.forEach((s, i) => {
    if (s.tt !== epoch) throw new OrbitInputError(`states[${i}].tt`, s.tt, `every state must share the epoch of states[0] (${epoch})`);
    for (const key of ['x', 'y', 'z', 'vx', 'vy', 'vz'] as const) requireFinite(`states[${i}].${key}`, s[key]);
    if (s.x === 0 && s.y === 0 && s.z === 0) throw new OrbitInputError(`states[${i}]`, 'origin', 'a heliocentric position cannot be the Sun itself');
  });
  timesTt.forEach((t, i) => requireFinite(`timesTt[${i}]`, t));
  const fraction = options.stepFraction ?? 0.02;
  const maxStep = options.maxStepDays ?? 1;
  const minStep = options.minStepDays ?? 1e-5;
  requirePositive('stepFraction', fraction);
  requirePositive('maxStepDays', maxStep);
  requirePositive('minStepDays', minStep);

  const omitted = new Set(options.omitBodies ?? []);
  const gms = Float64Array.from(PERTURBING_BODIES.map((p) => (omitted.has(p.body) ? 0 : p.gm)));
  const table = options.perturbers ?? new PerturberTable(options.perturberNodeDays ?? 0.125);
  const nodesBefore = table.nodeEvaluations;
  const order = timesTt.map((t, i) => ({ t, i }));
  const forward = order.filter((o) => o.t >= epoch).sort((a, b) => a.t - b.t);
  const backward = order.filter((o) => o.t < epoch).sort((a, b) => b.t - a.t);
  let steps = 0;
  for (const run of [forward, backward]) {
    if (run.length > 0) steps += integrateRun(states, epoch, run, table, gms, fraction, maxStep, minStep, sink);
  }
  return { stepCount: steps, perturberNodeCount: table.nodeEvaluations - nodesBefore };
}

/** Integrates from the epoch through `run` (monotonic in time away from the epoch), writing states at each. */
function integrateRun(
  states: readonly HeliocentricState[],
  epoch: number,
  run: readonly { t: number; i: number }[],
  table: PerturberTable,
  gms: Float64Array,
  fraction: number,
  maxStep: number,
  minStep: number,
  sink: EnsembleStateSink,
): number {
  const n = states.length;
  const size = 3 * n;
  const r = new Float64Array(size), v = new Float64Array(size);
  states.forEach((s, i) => {
    r.set([s.x, s.y, s.z], 3 * i);
    v.set([s.vx, s.vy, s.vz], 3 * i);
  });
  const r0 = new Float64Array(size), v0 = new Float64Array(size);
  const rs = new Float64Array(size);
  const k1 = new Float64Array(size), k2 = new Float64Array(size), k3 = new Float64Array(size), k4 = new Float64Array(size);
  const bodyR = new Float64Array(3 * BODY_COUNT), bodyV = new Float64Array(3 * BODY_COUNT);
  const direction = Math.sign(run[run.length - 1]!.t - epoch) || 1;
  const tEnd = run[run.length - 1]!.t;
  let t = epoch;
  let next = 0;
  let steps = 0;

  const outR = new Float64Array(size), outV = new Float64Array(size);
  const emit = (tOut: number, slot: number, tA: number, h: number): void => {
    // Cubic Hermite between (r0, v0) at tA and (r, v) at tA + h.
    if (h === 0) {
      outR.set(r);
      outV.set(v);
      sink(slot, outR, outV);
      return;
    }
    const s = (tOut - tA) / h;
    const s2 = s * s, s3 = s2 * s;
    const h00 = 2 * s3 - 3 * s2 + 1, h10 = (s3 - 2 * s2 + s) * h, h01 = -2 * s3 + 3 * s2, h11 = (s3 - s2) * h;
    const d00 = (6 * s2 - 6 * s) / h, d10 = 3 * s2 - 4 * s + 1, d01 = (-6 * s2 + 6 * s) / h, d11 = 3 * s2 - 2 * s;
    for (let j = 0; j < size; j++) {
      outR[j] = h00 * r0[j]! + h10 * v0[j]! + h01 * r[j]! + h11 * v[j]!;
      outV[j] = d00 * r0[j]! + d10 * v0[j]! + d01 * r[j]! + d11 * v[j]!;
    }
    sink(slot, outR, outV);
  };

  while (next < run.length && run[next]!.t === epoch) emit(epoch, run[next++]!.i, epoch, 0);
  while (next < run.length) {
    table.statesAt(t, bodyR, bodyV);
    let h = stepLimit(n, r, v, bodyR, bodyV, gms, fraction, maxStep);
    if (h < minStep) h = minStep;
    const remaining = Math.abs(tEnd - t);
    if (h >= remaining) h = remaining;
    else if (h > remaining / 2) h = remaining / 2; // avoid a sliver of a last step
    h *= direction;

    r0.set(r);
    v0.set(v);
    accelerate(n, r0, bodyR, gms, k1);
    table.statesAt(t + h / 2, bodyR);
    for (let j = 0; j < size; j++) { rs[j] = r0[j]! + (h / 2) * v0[j]!; }
    accelerate(n, rs, bodyR, gms, k2);
    for (let j = 0; j < size; j++) { rs[j] = r0[j]! + (h / 2) * (v0[j]! + (h / 2) * k1[j]!); }
    accelerate(n, rs, bodyR, gms, k3);
    table.statesAt(t + h, bodyR);
    for (let j = 0; j < size; j++) { rs[j] = r0[j]! + h * (v0[j]! + (h / 2) * k2[j]!); }
    accelerate(n, rs, bodyR, gms, k4);
    // RK4 on (r, v): stage velocities are v0 + c h k_{i-1}, folded into the position update.
    for (let j = 0; j < size; j++) {
      const a1 = k1[j]!, a2 = k2[j]!, a3 = k3[j]!, a4 = k4[j]!;
      r[j] = r0[j]! + h * v0[j]! + ((h * h) / 6) * (a1 + a2 + a3);
      v[j] = v0[j]! + (h / 6) * (a1 + 2 * a2 + 2 * a3 + a4);
    }
    for (let j = 0; j < size; j++) {
      if (!Number.isFinite(r[j]!) || !Number.isFinite(v[j]!)) {
        throw new OrbitConvergenceError(
          `member ${Math.floor(j / 3)}: the state became non-finite near TT ${t + h} (days since J2000); it passed through a body's centre`,
        );
      }
    }
    const tA = t;
    t = tA + h;
    if (Math.abs(tEnd - t) < 1e-12) t = tEnd;
    steps++;
    while (next < run.length && direction * (run[next]!.t - t) <= 0) {
      emit(run[next]!.t, run[next]!.i, tA, t - tA);
      next++;
    }
  }
  return steps;
}
