import { InputRefusal } from '../domain/refusal.js';
import { ellipseDistanceSquared, offsetArcsec } from './estimation/sky-spread.js';
import type { EphemerisRow, UncertaintyEllipse } from './ephemeris.js';

/**
 * Where a request's ephemeris table puts the object between its rows, and how
 * far a measured position is from that prediction in units of its uncertainty:
 * the check of a follow-up position against the predicted region.
 */

/** One row of a request's ephemeris table: ISO UTC, RA/Dec degrees, rates arcsec/s (RA rate times cos Dec), 1-sigma ellipse arcsec. */
export type TableRowLike = Pick<EphemerisRow, 't' | 'ra' | 'dec' | 'raRate' | 'decRate' | 'unc'>;

/** A predicted place as an offset from a reference row (east, north arcsec on that row's equidistant plane), with its ellipse. */
export interface TablePlace {
  readonly reference: TableRowLike;
  readonly eastArcsec: number;
  readonly northArcsec: number;
  readonly unc: UncertaintyEllipse | null;
}

/** A table or a measured position the check cannot use (names the field). */
export class TablePlaceError extends InputRefusal {
  override readonly name = 'TablePlaceError';
}

/**
 * The table's place at `tMs` (ms since 1970, UTC). Between two rows: a cubic
 * Hermite spline of the position on the azimuthal equidistant plane of the
 * earlier row (Snyder 1987, ch. 25), through both rows' positions with their
 * rates as derivatives (the later row's rates carried onto the earlier row's
 * plane). Against the orbit module evaluated between 5-minute rows of an
 * object moving 1.7 arcsec/s, rounded as the planner writes them, it is within 0.01 arcsec
 * (test/orbit/table-place.test.ts). Before the
 * first or after the last row, by up to `maxExtrapolationS`: a straight line
 * from that row at its rates. The ellipse's axes are interpolated linearly in
 * time, its position angle taken from the nearer row. Null beyond the table.
 */
export function placeFromTable(rows: readonly TableRowLike[], tMs: number, maxExtrapolationS: number): TablePlace | null {
  if (!Number.isFinite(tMs)) throw new TablePlaceError(`tMs = ${tMs}: expected a finite time in ms`);
  if (!(maxExtrapolationS >= 0)) throw new TablePlaceError(`maxExtrapolationS = ${maxExtrapolationS}: expected a number >= 0`);
  if (rows.length === 0) return null;
  const times = rows.map((r) => Date.parse(r.t));
  if (times.some((t) => !Number.isFinite(t))) throw new TablePlaceError('every table row needs an ISO UTC time t');
  const first = rows[0]!;
  const last = rows[rows.length - 1]!;
  const line = (row: TableRowLike, rowMs: number): TablePlace | null => {
    const dtS = (tMs - rowMs) / 1000;
    if (Math.abs(dtS) > maxExtrapolationS) return null;
    return { reference: row, eastArcsec: row.raRate * dtS, northArcsec: row.decRate * dtS, unc: row.unc };
  };
  if (tMs <= times[0]!) return line(first, times[0]!);
  if (tMs >= times[times.length - 1]!) return line(last, times[times.length - 1]!);
  let k = 0;
  while (times[k + 1]! < tMs) k++;
  const a = rows[k]!;
  const b = rows[k + 1]!;
  const hS = (times[k + 1]! - times[k]!) / 1000;
  const s = (tMs - times[k]!) / 1000 / hS;
  const [bEast, bNorth] = offsetArcsec(a.ra, a.dec, b.ra, b.dec);
  // Row b's rates are along its own east and north; on row a's plane they turn by about dRA sin(Dec),
  // which matters at a few arcsec/s, so they are carried over by moving b one second along them.
  const cosDec = Math.cos((b.dec * Math.PI) / 180);
  const [bEast1, bNorth1] = offsetArcsec(a.ra, a.dec, b.ra + b.raRate / 3600 / Math.max(cosDec, 1e-9), b.dec + b.decRate / 3600);
  const bEastRate = bEast1 - bEast;
  const bNorthRate = bNorth1 - bNorth;
  // Hermite basis (e.g. Press et al., Numerical Recipes, 3rd ed., sect. 3.3 on cubic splines); row a is the origin, so its h00 term is 0.
  const h10 = s ** 3 - 2 * s ** 2 + s;
  const h01 = -2 * s ** 3 + 3 * s ** 2;
  const h11 = s ** 3 - s ** 2;
  const east = h10 * hS * a.raRate + h01 * bEast + h11 * hS * bEastRate;
  const north = h10 * hS * a.decRate + h01 * bNorth + h11 * hS * bNorthRate;
  let unc: UncertaintyEllipse | null;
  if (a.unc !== null && b.unc !== null) {
    unc = { major: a.unc.major + s * (b.unc.major - a.unc.major), minor: a.unc.minor + s * (b.unc.minor - a.unc.minor), pa: s < 0.5 ? a.unc.pa : b.unc.pa };
  } else unc = a.unc ?? b.unc;
  return { reference: a, eastArcsec: east, northArcsec: north, unc };
}

/**
 * Distance of a measured position (RA/Dec degrees, 1-sigma per axis arcsec) from a predicted
 * place, in units of the combined 1-sigma: sqrt(d' (C + s^2 I)^-1 d), with C the predicted
 * ellipse's covariance and s the measurement's sigma (an isotropic error adds s^2 to both
 * principal variances, so the ellipse keeps its orientation). A prediction without an ellipse
 * counts with the measurement's sigma alone. A value above 5 is outside the 5-sigma region.
 */
export function sigmaDistance(predicted: TablePlace, measured: { raDeg: number; decDeg: number; sigmaArcsec: number }): number {
  if (!(measured.sigmaArcsec > 0)) throw new TablePlaceError(`sigmaArcsec = ${measured.sigmaArcsec}: expected a number > 0`);
  const [east, north] = offsetArcsec(predicted.reference.ra, predicted.reference.dec, measured.raDeg, measured.decDeg);
  const u = predicted.unc ?? { major: 0, minor: 0, pa: 0 };
  const combined: UncertaintyEllipse = { major: Math.hypot(u.major, measured.sigmaArcsec), minor: Math.hypot(u.minor, measured.sigmaArcsec), pa: u.pa };
  return Math.sqrt(ellipseDistanceSquared(combined, east - predicted.eastArcsec, north - predicted.northArcsec));
}
