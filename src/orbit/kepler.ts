import { OrbitConvergenceError, OrbitInputError, requireFinite, requirePositive } from './errors.js';
import type { Vec3 } from './vector.js';

/**
 * Two-body tools: Kepler's equation in its elliptic, hyperbolic and parabolic
 * forms, and two-body propagation of a state by universal variables. Angles in
 * radians; lengths, times and GM in any consistent units (au, days and
 * au^3/day^2 in this project). Algorithm and section numbers cited below for
 * Vallado (4th ed.) and Danby (2nd ed.) are from memory; the formulas are checked
 * by the tests against worked examples and identities, not against the numbering.
 */

const TWO_PI = 2 * Math.PI;
const MAX_ITERATIONS = 100;

/**
 * Eccentric anomaly E (rad) from mean anomaly M (rad) for 0 <= e < 1, solving
 * M = E - e sin E (Meeus, Astronomical Algorithms, 2nd ed., ch. 30) by Newton's
 * method from Danby's starter E0 = M + 0.85 e sign(sin M) (Danby, Fundamentals
 * of Celestial Mechanics, 6.6), which converges for every e < 1. Returns E in
 * the same revolution as M; M - (E - e sin E) at rounding level (E itself to about
 * 1e-15 rad, coarser by 1 / (1 - e cos E) near e = 1 and small M).
 */
export function eccentricAnomalyFromMean(meanAnomalyRad: number, e: number): number {
  requireFinite('meanAnomalyRad', meanAnomalyRad);
  requireFinite('e', e);
  if (e < 0 || e >= 1) throw new OrbitInputError('e', e, 'elliptic Kepler equation needs 0 <= e < 1');
  const revolutions = Math.round(meanAnomalyRad / TWO_PI);
  const m = meanAnomalyRad - revolutions * TWO_PI; // in [-pi, pi]
  let ecc = m + 0.85 * e * Math.sign(Math.sin(m));
  for (let k = 0; k < MAX_ITERATIONS; k++) {
    const f = ecc - e * Math.sin(ecc) - m;
    // Converged when the residual is at rounding level: near e = 1 and small M the derivative 1 - e cos E
    // is tiny, and the step can stall above 1e-15 on rounding noise.
    if (Math.abs(f) <= 4e-16 * (Math.abs(ecc) + Math.abs(m))) return ecc + revolutions * TWO_PI;
    const step = f / (1 - e * Math.cos(ecc));
    ecc -= step;
    if (Math.abs(step) <= 1e-15 * (1 + Math.abs(ecc))) return ecc + revolutions * TWO_PI;
  }
  throw new OrbitConvergenceError(`Kepler's equation did not converge for M = ${meanAnomalyRad} rad, e = ${e}`);
}

/** Mean anomaly M = E - e sin E (rad), Meeus ch. 30. */
export function meanFromEccentricAnomaly(eccentricAnomalyRad: number, e: number): number {
  return eccentricAnomalyRad - e * Math.sin(eccentricAnomalyRad);
}

/**
 * Hyperbolic anomaly H (rad) from the hyperbolic mean anomaly M = e sinh H - H,
 * for e > 1 (Vallado, Fundamentals of Astrodynamics and Applications, 4th ed.,
 * Algorithm 4), by Newton's method from H0 = sign(M) ln(2|M|/e + 1.8) (Danby 6.9).
 */
export function hyperbolicAnomalyFromMean(meanAnomalyRad: number, e: number): number {
  requireFinite('meanAnomalyRad', meanAnomalyRad);
  requireFinite('e', e);
  if (e <= 1) throw new OrbitInputError('e', e, 'hyperbolic Kepler equation needs e > 1');
  const m = meanAnomalyRad;
  // Start: the logarithmic guess for large |M|; for small |M| the smaller root of the
  // series (e - 1) H + e H^3 / 6 = M, which keeps Newton safe near e = 1.
  let h =
    Math.abs(m) < 1
      ? Math.sign(m) * Math.min(Math.abs(m) / (e - 1), Math.cbrt((6 * Math.abs(m)) / e))
      : Math.sign(m) * Math.log((2 * Math.abs(m)) / e + 1.8);
  for (let k = 0; k < MAX_ITERATIONS; k++) {
    const f = e * Math.sinh(h) - h - m;
    // Converged when the residual is at rounding level (the step can stall above 1e-15 when e - 1 is tiny).
    if (Math.abs(f) <= 4e-16 * (Math.abs(m) + e * Math.abs(Math.sinh(h)))) return h;
    const step = f / (e * Math.cosh(h) - 1);
    h -= step;
    if (Math.abs(step) <= 1e-15 * (1 + Math.abs(h))) return h;
  }
  throw new OrbitConvergenceError(`hyperbolic Kepler equation did not converge for M = ${meanAnomalyRad} rad, e = ${e}`);
}

/** Hyperbolic mean anomaly M = e sinh H - H (rad). */
export function meanFromHyperbolicAnomaly(hyperbolicAnomalyRad: number, e: number): number {
  return e * Math.sinh(hyperbolicAnomalyRad) - hyperbolicAnomalyRad;
}

/**
 * Barker's equation for the parabola: given W = sqrt(GM / (2 q^3)) (t - T),
 * returns D = tan(nu/2) solving D + D^3/3 = W in closed form,
 * D = 2 sinh(asinh(3W/2) / 3) (Meeus ch. 34; Vallado Algorithm 3).
 */
export function parabolicTanHalfAnomaly(w: number): number {
  requireFinite('w', w);
  return 2 * Math.sinh(Math.asinh(1.5 * w) / 3);
}

/** True anomaly (rad) from the eccentric anomaly, tan(nu/2) = sqrt((1+e)/(1-e)) tan(E/2) (Meeus 30.1). */
export function trueFromEccentricAnomaly(eccentricAnomalyRad: number, e: number): number {
  return 2 * Math.atan2(Math.sqrt(1 + e) * Math.sin(eccentricAnomalyRad / 2), Math.sqrt(1 - e) * Math.cos(eccentricAnomalyRad / 2));
}

/** Eccentric anomaly (rad, -pi..pi) from the true anomaly, the inverse of Meeus 30.1. */
export function eccentricFromTrueAnomaly(trueAnomalyRad: number, e: number): number {
  return 2 * Math.atan2(Math.sqrt(1 - e) * Math.sin(trueAnomalyRad / 2), Math.sqrt(1 + e) * Math.cos(trueAnomalyRad / 2));
}

/** True anomaly (rad) from the hyperbolic anomaly, tan(nu/2) = sqrt((e+1)/(e-1)) tanh(H/2) (Vallado 2-35). */
export function trueFromHyperbolicAnomaly(hyperbolicAnomalyRad: number, e: number): number {
  return 2 * Math.atan(Math.sqrt((e + 1) / (e - 1)) * Math.tanh(hyperbolicAnomalyRad / 2));
}

/** Hyperbolic anomaly (rad) from the true anomaly, the inverse of Vallado 2-35. */
export function hyperbolicFromTrueAnomaly(trueAnomalyRad: number, e: number): number {
  return 2 * Math.atanh(Math.sqrt((e - 1) / (e + 1)) * Math.tan(trueAnomalyRad / 2));
}

/**
 * Stumpff functions c2(psi) = (1 - cos sqrt psi)/psi and c3(psi) =
 * (sqrt psi - sin sqrt psi)/psi^1.5, with their hyperbolic forms for psi < 0 and
 * series near 0 (Vallado Algorithm 1). Returned as [c2, c3].
 */
export function stumpff(psi: number): [number, number] {
  if (psi > 1e-6) {
    const s = Math.sqrt(psi);
    return [(1 - Math.cos(s)) / psi, (s - Math.sin(s)) / (psi * s)];
  }
  if (psi < -1e-6) {
    const s = Math.sqrt(-psi);
    return [(1 - Math.cosh(s)) / psi, (Math.sinh(s) - s) / (-psi * s)];
  }
  return [0.5 - psi / 24 + (psi * psi) / 720, 1 / 6 - psi / 120 + (psi * psi) / 5040];
}

/** Position and velocity, any consistent units. */
export interface PositionVelocity {
  readonly r: Vec3;
  readonly v: Vec3;
}

/**
 * Two-body propagation of a state over dt by universal variables (Vallado,
 * Algorithm 8 "KEPLER", with f and g functions), valid for elliptic, parabolic
 * and hyperbolic motion alike. The universal-anomaly equation is monotonic in
 * chi, so it is solved by Newton's method guarded by bisection inside a
 * bracket; this converges for any dt. Units: consistent with gm (au, days,
 * au^3/day^2 here). Round-off: about 1e-13 relative per call.
 */
export function propagateTwoBody(state: PositionVelocity, dt: number, gm: number): PositionVelocity {
  requireFinite('dt', dt);
  requirePositive('gm', gm);
  const { r, v } = state;
  const r0 = Math.hypot(r.x, r.y, r.z);
  if (!(r0 > 0)) throw new OrbitInputError('r', r0, 'position must be a non-zero finite vector');
  if (dt === 0) return { r: { ...r }, v: { ...v } };
  const sqrtMu = Math.sqrt(gm);
  const v2 = v.x * v.x + v.y * v.y + v.z * v.z;
  const sigma0 = (r.x * v.x + r.y * v.y + r.z * v.z) / sqrtMu;
  const alpha = 2 / r0 - v2 / gm; // 1/a
  const target = sqrtMu * dt;

  const timeOf = (chi: number): { f: number; radius: number; c2: number; c3: number; psi: number } => {
    const psi = alpha * chi * chi;
    const [c2, c3] = stumpff(psi);
    const chi2 = chi * chi;
    const f = sigma0 * chi2 * c2 + (1 - alpha * r0) * chi2 * chi * c3 + r0 * chi - target;
    const radius = chi2 * c2 + sigma0 * chi * (1 - psi * c3) + r0 * (1 - psi * c2);
    return { f, radius, c2, c3, psi };
  };

  // Bracket the root: F(0) = -sqrt(mu) dt has the sign opposite to dt; F increases with chi.
  const direction = Math.sign(dt);
  let lo = 0;
  let hi = direction * Math.max(Math.abs(target) / r0, 1e-12);
  if (alpha > 0) hi = direction * Math.max(Math.abs(hi), Math.min(Math.abs(target) * alpha, 2 * Math.PI / Math.sqrt(alpha)));
  for (let k = 0; k < 2000; k++) {
    const f = timeOf(hi).f;
    if (!Number.isFinite(f) || Math.sign(f) === direction) break;
    lo = hi;
    hi *= 2;
  }
  // Safeguarded Newton (Numerical Recipes "rtsafe"): bisect when Newton leaves the bracket or stalls.
  let chi = (lo + hi) / 2;
  let best = timeOf(chi);
  let stepOld = Math.abs(hi - lo);
  let step = stepOld;
  for (let k = 0; ; k++) {
    if (!Number.isFinite(best.f) || Math.sign(best.f) === direction) hi = chi;
    else lo = chi;
    const newton = chi - best.f / best.radius;
    const inside = direction > 0 ? newton > lo && newton < hi : newton < lo && newton > hi;
    const slow = !Number.isFinite(best.f) || Math.abs(2 * best.f) > Math.abs(stepOld * best.radius);
    stepOld = step;
    let next: number;
    if (!Number.isFinite(newton) || !inside || slow) {
      next = (lo + hi) / 2;
    } else {
      next = newton;
    }
    step = Math.abs(next - chi);
    chi = next;
    best = timeOf(chi);
    if (step <= 1e-15 * (1 + Math.abs(chi)) || best.f === 0 || Math.abs(hi - lo) <= 1e-15 * Math.abs(chi)) break;
    if (k >= 300) throw new OrbitConvergenceError(`universal Kepler equation did not converge for dt = ${dt}, 1/a = ${alpha}`);
  }

  const chi2 = chi * chi;
  const fLagrange = 1 - (chi2 * best.c2) / r0;
  const gLagrange = dt - (chi2 * chi * best.c3) / sqrtMu;
  const rNew = {
    x: fLagrange * r.x + gLagrange * v.x,
    y: fLagrange * r.y + gLagrange * v.y,
    z: fLagrange * r.z + gLagrange * v.z,
  };
  const radius = Math.hypot(rNew.x, rNew.y, rNew.z);
  const fDot = (sqrtMu / (radius * r0)) * chi * (best.psi * best.c3 - 1);
  const gDot = 1 - (chi2 * best.c2) / radius;
  return {
    r: rNew,
    v: { x: fDot * r.x + gDot * v.x, y: fDot * r.y + gDot * v.y, z: fDot * r.z + gDot * v.z },
  };
}
