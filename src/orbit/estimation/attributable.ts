import { ARCSEC_PER_RAD, DEG_PER_RAD, SECONDS_PER_DAY } from '../constants.js';
import { EstimationInputError } from './errors.js';
import { invert } from './linalg.js';
import type { PreparedObservation } from './observations.js';
import { project, raDecFromVector, tangentFrame, unproject, type TangentFrame, type Vec3 } from './tangent.js';

/**
 * The attributable of a tracklet (Milani, Sansaturio, Tommei, Arratia &
 * Chesley 2005, "Multiple solutions for asteroid orbits", A&A 431, 729, sect.
 * 2; Milani & Gronchi 2010, Theory of Orbit Determination, ch. 8): direction
 * and angular rate (and, when the arc supports it, angular acceleration) at the
 * tracklet's mean epoch, by weighted least squares of polynomials in time to
 * the positions projected on an azimuthal equidistant plane centred on the
 * fitted position (so the rates are exactly dRA/dt cos Dec and dDec/dt there).
 * Weights 1/sigma^2 per axis. Outliers by a leave-one-out test: an observation
 * whose offset from the fit of the others, over its own and the prediction's
 * variance, exceeds the chi-square (2 dof) value of p = 0.001 (13.8) is
 * flagged and left out, worst first, while at least 3 remain and at most a
 * third are flagged.
 */

export interface Attributable {
  /** Mean time of the observations used, ms since 1970 UTC. */
  readonly epochMs: number;
  /** Equidistant frame centred on the fitted direction at the epoch. */
  readonly frame: TangentFrame;
  readonly raDeg: number;
  readonly decDeg: number;
  /** dRA/dt cos Dec and dDec/dt at the epoch, arcsec/s. */
  readonly raRateArcsecPerS: number;
  readonly decRateArcsecPerS: number;
  /** Second derivatives, arcsec/h^2, when fitted (5 or more observations and significant at 3 sigma); else null. */
  readonly accelerationArcsecPerH2: { readonly ra: number; readonly dec: number } | null;
  /**
   * Covariance of (xi0, eta0, xiDot, etaDot): rad, rad, rad/day, rad/day, for
   * the linear model (the parameters ranging adjusts), from the stated sigmas.
   */
  readonly covariance: number[][];
  readonly chiSquare: number;
  readonly degreesOfFreedom: number;
  /** Per input observation (input order): observed minus fitted, arcsec, and whether it was flagged. */
  readonly residuals: readonly { index: number; dRaArcsec: number; dDecArcsec: number; outlier: boolean }[];
  /** Per prepared observation (time order): used in the fit. */
  readonly used: readonly boolean[];
}

/** Chi-square with 2 degrees of freedom exceeded with probability 0.001. */
export const OUTLIER_CHI2_2DOF = 13.82;
/** A quadratic term is kept when it is this many sigma from zero in either axis. */
const ACCELERATION_SIGNIFICANCE = 3;
const MS_PER_DAY = SECONDS_PER_DAY * 1000;

interface AxisFit {
  readonly coefficients: [number[], number[]];
  /** Inverse normal matrix for unit weights scaled by 1/sigma^2 (the parameter covariance). */
  readonly covariance: number[][];
  readonly order: number;
}

function polyRow(dt: number, order: number): number[] {
  return order === 2 ? [1, dt, (dt * dt) / 2] : [1, dt];
}

/** Weighted LSQ of xi(t), eta(t) by a polynomial of `order` (1 or 2) over the used observations. */
function fitAxes(xi: readonly number[], eta: readonly number[], dt: readonly number[], w: readonly number[], used: readonly boolean[], order: number): AxisFit | null {
  const p = order + 1;
  const normal = Array.from({ length: p }, () => new Array<number>(p).fill(0));
  const bx = new Array<number>(p).fill(0), by = new Array<number>(p).fill(0);
  for (let i = 0; i < xi.length; i++) {
    if (!used[i]) continue;
    const row = polyRow(dt[i]!, order);
    for (let a = 0; a < p; a++) {
      bx[a]! += w[i]! * row[a]! * xi[i]!;
      by[a]! += w[i]! * row[a]! * eta[i]!;
      for (let b = 0; b < p; b++) normal[a]![b]! += w[i]! * row[a]! * row[b]!;
    }
  }
  const covariance = invert(normal);
  if (!covariance) return null;
  const solve = (rhs: number[]): number[] => covariance.map((row) => row.reduce((s, c, j) => s + c * rhs[j]!, 0));
  return { coefficients: [solve(bx), solve(by)], covariance, order };
}

const evaluate = (c: readonly number[], dt: number): number => c[0]! + c[1]! * dt + (c.length > 2 ? (c[2]! * dt * dt) / 2 : 0);

/** How fitAttributable treats doubtful positions. */
export interface AttributableOptions {
  /**
   * Run the leave-one-out outlier search (default true). The short-arc
   * estimate turns it off: a close object's curving path is not a straight
   * line or a parabola on the sky, so it judges positions by orbits instead.
   */
  readonly leaveOneOut?: boolean;
  /** Positions (time order) to leave out from the start, flagged as outliers. */
  readonly exclude?: readonly boolean[];
}

/** Fits the attributable; throws EstimationInputError when the times do not support a rate. */
export function fitAttributable(observations: readonly PreparedObservation[], options: AttributableOptions = {}): Attributable {
  const n = observations.length;
  const used = observations.map((_, i) => !(options.exclude?.[i] ?? false));
  const w = observations.map((o) => 1 / (o.sigmaRad * o.sigmaRad));
  const centre: Vec3 = [0, 0, 0];
  for (const o of observations) for (let k = 0; k < 3; k++) centre[k] = centre[k]! + o.unit[k]!;
  let frame = tangentFrame(centre);
  const maxFlags = options.leaveOneOut === false ? 0 : Math.floor(n / 3);

  const solveWith = (mask: readonly boolean[]) => {
    const count = mask.filter(Boolean).length;
    const epochMs = observations.reduce((s, o, i) => (mask[i] ? s + o.timeMs : s), 0) / count;
    const dt = observations.map((o) => (o.timeMs - epochMs) / MS_PER_DAY);
    let fit: AxisFit | null = null;
    let linear: AxisFit | null = null;
    // Re-centre the frame on the fitted direction so its rates are the sky-plane rates there.
    for (let iteration = 0; iteration < 6; iteration++) {
      const projected = observations.map((o) => project(frame, o.unit));
      const xi = projected.map((p) => p[0]);
      const eta = projected.map((p) => p[1]);
      linear = fitAxes(xi, eta, dt, w, mask, 1);
      fit = linear;
      if (linear && count >= 5) {
        const quadratic = fitAxes(xi, eta, dt, w, mask, 2);
        if (quadratic) {
          const s2 = Math.sqrt(quadratic.covariance[2]![2]!);
          const significant = Math.abs(quadratic.coefficients[0][2]!) > ACCELERATION_SIGNIFICANCE * s2 || Math.abs(quadratic.coefficients[1][2]!) > ACCELERATION_SIGNIFICANCE * s2;
          if (significant) fit = quadratic;
        }
      }
      if (!fit) break;
      const offset = Math.hypot(fit.coefficients[0][0]!, fit.coefficients[1][0]!);
      if (offset < 1e-12) break;
      frame = tangentFrame(unproject(frame, fit.coefficients[0][0]!, fit.coefficients[1][0]!));
    }
    return { fit, linear, epochMs, dt };
  };

  let result = solveWith(used);
  if (!result.fit) {
    throw new EstimationInputError('observations[].t', observations.map((o) => o.timeUtc.toISOString()).join(', '), 'the times do not determine a rate (too few distinct times)');
  }
  // Leave-one-out outlier search, worst first.
  for (let flagged = 0; flagged < maxFlags && n - flagged > 3; flagged++) {
    let worst = -1;
    let worstD2 = OUTLIER_CHI2_2DOF;
    for (let i = 0; i < n; i++) {
      if (!used[i]) continue;
      const mask = used.map((u, j) => u && j !== i);
      const others = solveWith(mask);
      if (!others.fit) continue;
      const [cx, cy] = others.fit.coefficients;
      const pr = project(frame, observations[i]!.unit);
      const row = polyRow(others.dt[i]!, others.fit.order);
      let variance = 0;
      for (let a = 0; a < row.length; a++) for (let b = 0; b < row.length; b++) variance += row[a]! * others.fit.covariance[a]![b]! * row[b]!;
      const dx = pr[0] - evaluate(cx, others.dt[i]!), dy = pr[1] - evaluate(cy, others.dt[i]!);
      const d2 = (dx * dx + dy * dy) / (1 / w[i]! + variance);
      if (d2 > worstD2) {
        worstD2 = d2;
        worst = i;
      }
    }
    if (worst < 0) break;
    used[worst] = false;
    result = solveWith(used);
    if (!result.fit) throw new EstimationInputError('observations', n, 'after removing outliers the times no longer determine a rate');
  }

  // The leave-one-out fits moved the frame: refit the final set in its own frame.
  result = solveWith(used);
  const fit = result.fit!;
  const [cx, cy] = fit.coefficients;
  let chiSquare = 0;
  const residualsByTime = observations.map((o, i) => {
    const p = project(frame, o.unit);
    const dx = p[0] - evaluate(cx, result.dt[i]!), dy = p[1] - evaluate(cy, result.dt[i]!);
    if (used[i]) chiSquare += (dx * dx + dy * dy) * w[i]!;
    return { index: o.index, dRaArcsec: dx * ARCSEC_PER_RAD, dDecArcsec: dy * ARCSEC_PER_RAD, outlier: !used[i] };
  });
  const c = (result.linear ?? fit).covariance;
  const covariance = [
    [c[0]![0]!, 0, c[0]![1]!, 0],
    [0, c[0]![0]!, 0, c[0]![1]!],
    [c[1]![0]!, 0, c[1]![1]!, 0],
    [0, c[1]![0]!, 0, c[1]![1]!],
  ];
  const { raRad, decRad } = raDecFromVector(frame.centre);
  const toArcsecPerS = ARCSEC_PER_RAD / SECONDS_PER_DAY;
  const toArcsecPerH2 = ARCSEC_PER_RAD / 576;
  const usedCount = used.filter(Boolean).length;
  return {
    epochMs: result.epochMs,
    frame,
    raDeg: raRad * DEG_PER_RAD,
    decDeg: decRad * DEG_PER_RAD,
    raRateArcsecPerS: cx[1]! * toArcsecPerS,
    decRateArcsecPerS: cy[1]! * toArcsecPerS,
    accelerationArcsecPerH2: fit.order === 2 ? { ra: cx[2]! * toArcsecPerH2, dec: cy[2]! * toArcsecPerH2 } : null,
    covariance,
    chiSquare,
    degreesOfFreedom: Math.max(0, 2 * usedCount - 2 * (fit.order + 1)),
    residuals: [...residualsByTime].sort((a, b) => a.index - b.index),
    used,
  };
}

/**
 * Linear extrapolation of an attributable along its great circle at its
 * rate: the direction at `timeMs` (the "no dynamics" prediction the
 * calibration compares against). Radians.
 */
export function extrapolateAttributable(attributable: Attributable, timeMs: number): { raRad: number; decRad: number } {
  const dtDays = (timeMs - attributable.epochMs) / MS_PER_DAY;
  const k = SECONDS_PER_DAY / ARCSEC_PER_RAD;
  const u = unproject(attributable.frame, attributable.raRateArcsecPerS * k * dtDays, attributable.decRateArcsecPerS * k * dtDays);
  return raDecFromVector(u);
}
