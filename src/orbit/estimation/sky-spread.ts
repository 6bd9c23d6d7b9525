import { upperTail } from '../../stats/index.js';
import { ARCSEC_PER_RAD, DEG_PER_RAD, RAD_PER_DEG } from '../constants.js';
import type { UncertaintyEllipse } from '../ephemeris.js';
import { symmetricEigen2 } from './linalg.js';
import { project, tangentFrame, unitFromRaDec } from './tangent.js';

/**
 * Summary of an ensemble's spread on the sky around the nominal place.
 *
 * Method: members are projected on the azimuthal equidistant plane centred on
 * the nominal (Snyder 1987, ch. 25), arcsec; the second-moment matrix S about
 * the nominal (not about the mean, so an offset cloud widens the ellipse) gives
 * the shape and orientation; its size is then calibrated on the members
 * themselves: S is scaled so that the 3-sigma ellipse encloses the fraction of
 * members a 2-D Gaussian's would, 1 - exp(-9/2) = 98.89 %. For a Gaussian
 * cloud the scale is 1; for a long or curved cloud (range-dominated
 * uncertainty) it grows until the ellipse covers the cloud, so the ellipse
 * stays honest at the cost of width across the cloud. A few members far out
 * in a heavy tail would otherwise set the shape (thin and long) while the bulk
 * across it sets the scale, giving an ellipse far longer than the cloud needs;
 * so the shape is taken again from the second moments of the members the
 * ellipse holds (a trimmed covariance, in the spirit of Rousseeuw's
 * minimum-volume ellipsoid, Rousseeuw & Leroy 1987, ch. 7), re-scaled to hold
 * the same 98.89 %, twice, and the ellipse of least area is kept: every
 * candidate holds 98.89 % of the members, so the choice costs no coverage.
 * The 99 % extent is the ellipse of the same shape holding 99 % of the members.
 */
export interface SkySpread {
  /** 1-sigma ellipse, arcsec, pa deg east of north (0-180) of the major axis. */
  readonly sigma: UncertaintyEllipse;
  /** Ellipse holding 99 % of the virtual orbits, same shape. */
  readonly extent99: UncertaintyEllipse;
  /** Factor applied to S (variance units) by the coverage calibration. */
  readonly coverageScale: number;
}

/** Fraction of a 2-D Gaussian inside its 3-sigma (Mahalanobis distance 3) ellipse. */
export const GAUSSIAN_3SIGMA_CONTENT_2D = 1 - Math.exp(-4.5);
/** Variance floor, arcsec^2 (1 mas), so identical members still give a finite ellipse. */
const VARIANCE_FLOOR_ARCSEC2 = 1e-6;
/** Re-shaping passes on the members inside the ellipse (see SkySpread). */
const TRIM_PASSES = 2;

function ellipseOf(a: number, b: number, c: number, scale: number): UncertaintyEllipse {
  const eig = symmetricEigen2(a * scale, b * scale, c * scale);
  // The eigenvector is (east, north); pa east of north.
  let pa = Math.atan2(eig.vx, eig.vy) * DEG_PER_RAD;
  if (pa < 0) pa += 180;
  if (pa >= 180) pa -= 180;
  return { major: Math.sqrt(Math.max(eig.large, 0)), minor: Math.sqrt(Math.max(eig.small, 0)), pa };
}

/**
 * Spread of members (RA/Dec degrees, `count` values from `offset` in the
 * arrays) around a nominal place (degrees).
 */
export function skySpread(nominalRaDeg: number, nominalDecDeg: number, raDeg: ArrayLike<number>, decDeg: ArrayLike<number>, offset: number, count: number): SkySpread {
  const frame = tangentFrame(unitFromRaDec(nominalRaDeg * RAD_PER_DEG, nominalDecDeg * RAD_PER_DEG));
  const [ex, ey, ez] = frame.east, [nx, ny, nz] = frame.north, [cx, cy, cz] = frame.centre;
  const xs = new Float64Array(count), ys = new Float64Array(count);
  let sxx = 0, sxy = 0, syy = 0;
  for (let m = 0; m < count; m++) {
    // project(frame, unitFromRaDec(...)) written out: this runs for every member at every ephemeris row.
    const ra = raDeg[offset + m]! * RAD_PER_DEG, dec = decDeg[offset + m]! * RAD_PER_DEG;
    const cosDec = Math.cos(dec);
    const ux = cosDec * Math.cos(ra), uy = cosDec * Math.sin(ra), uz = Math.sin(dec);
    const px = ux * ex + uy * ey + uz * ez, py = ux * nx + uy * ny + uz * nz, pz = ux * cx + uy * cy + uz * cz;
    const sin = Math.sqrt(px * px + py * py);
    const k = sin === 0 ? 0 : (Math.atan2(sin, pz) / sin) * ARCSEC_PER_RAD;
    const x = px * k, y = py * k;
    xs[m] = x; ys[m] = y;
    sxx += x * x; sxy += x * y; syy += y * y;
  }
  sxx = sxx / count + VARIANCE_FLOOR_ARCSEC2;
  syy = syy / count + VARIANCE_FLOOR_ARCSEC2;
  sxy /= count;
  const d2 = new Float64Array(count);
  /** Squared distances under (sxx, sxy, syy) into d2; the scale that makes 3 x the ellipse hold GAUSSIAN_3SIGMA_CONTENT_2D; its area's measure. */
  const calibrate = (a: number, b: number, c: number) => {
    const det = a * c - b * b;
    for (let m = 0; m < count; m++) {
      const x = xs[m]!, y = ys[m]!;
      d2[m] = (c * x * x - 2 * b * x * y + a * y * y) / det;
    }
    // Both quantiles sit in the top 1.2 %: only that tail is put in order.
    const tail = upperTail(d2, Math.min(GAUSSIAN_3SIGMA_CONTENT_2D, 0.99));
    const covered = tail.quantile(GAUSSIAN_3SIGMA_CONTENT_2D);
    const scale = Math.max(covered / 9, 1e-6);
    return { a, b, c, covered, scale, extent: Math.max(tail.quantile(0.99), 1e-6), area: scale * Math.sqrt(det) };
  };
  let best = calibrate(sxx, sxy, syy);
  let current = best;
  /** Second moments of the members within squared distance `limit` of the current shape, re-calibrated; null when too few. */
  const reshaped = (limit: number) => {
    let a = 0, b = 0, c = 0, inside = 0;
    for (let m = 0; m < count; m++) {
      if (!(d2[m]! <= limit)) continue;
      const x = xs[m]!, y = ys[m]!;
      a += x * x; b += x * y; c += y * y; inside++;
    }
    return inside < 3 ? null : calibrate(a / inside + VARIANCE_FLOOR_ARCSEC2, b / inside, c / inside + VARIANCE_FLOOR_ARCSEC2);
  };
  for (let pass = 0; pass < TRIM_PASSES; pass++) {
    // The members the current ellipse must hold, so the far 1.1 % no longer set its shape.
    const next = reshaped(current.covered);
    if (next === null) break;
    current = next;
    if (current.area < best.area) best = current;
  }
  return {
    sigma: ellipseOf(best.a, best.b, best.c, best.scale),
    extent99: ellipseOf(best.a, best.b, best.c, best.extent),
    coverageScale: best.scale,
  };
}

/** Squared Mahalanobis distance (in sigma units) of an offset (east, north arcsec) from the centre of a 1-sigma ellipse. */
export function ellipseDistanceSquared(ellipse: UncertaintyEllipse, eastArcsec: number, northArcsec: number): number {
  const pa = ellipse.pa * RAD_PER_DEG;
  // Major axis along (sin pa, cos pa) in (east, north).
  const along = eastArcsec * Math.sin(pa) + northArcsec * Math.cos(pa);
  const across = eastArcsec * Math.cos(pa) - northArcsec * Math.sin(pa);
  const major = Math.max(ellipse.major, 1e-9), minor = Math.max(ellipse.minor, 1e-9);
  return (along / major) ** 2 + (across / minor) ** 2;
}

/** Offset (east, north arcsec) of a place from a centre, on the equidistant plane of the centre. */
export function offsetArcsec(centreRaDeg: number, centreDecDeg: number, raDeg: number, decDeg: number): [number, number] {
  const frame = tangentFrame(unitFromRaDec(centreRaDeg * RAD_PER_DEG, centreDecDeg * RAD_PER_DEG));
  const p = project(frame, unitFromRaDec(raDeg * RAD_PER_DEG, decDeg * RAD_PER_DEG));
  return [p[0] * ARCSEC_PER_RAD, p[1] * ARCSEC_PER_RAD];
}
