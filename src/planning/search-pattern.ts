import { requireFinite } from './errors.js';

/**
 * A small pattern of pointings covering an object's 3-sigma uncertainty region
 * when it is larger than the imager's field.
 *
 * Method: tile the rectangle circumscribing the 3-sigma ellipse (semi-axes 3 x
 * the 1-sigma axes, rotated by its position angle) with square fields of the
 * imager's shorter side, overlapped by `overlapFraction` (10 % by default,
 * common practice for mosaics so that a target on a seam is not lost); keep the
 * tiles that touch the ellipse; offsets are on the tangent plane (small-field
 * gnomonic projection about the nominal position, inverted as in Calabretta &
 * Greisen 2002, A&A 395, 1077, so a pointing lies at its stated offset to within
 * rho^3/3 of the offset rho in radians). Pointings are ordered by
 * distance from the nominal position, nearest first, since the nominal position
 * is the most likely.
 */

export interface SearchPointing {
  raDeg: number;
  decDeg: number;
  /** Offset from the nominal position on the sky, arcsec (east and north). */
  offsetEastArcsec: number;
  offsetNorthArcsec: number;
}

export interface SearchPattern {
  pointings: SearchPointing[];
  fieldArcsec: number;
  overlapFraction: number;
  /** 3-sigma semi-axes covered, arcsec, and their position angle, deg east of north. */
  semiMajor3SigmaArcsec: number;
  semiMinor3SigmaArcsec: number;
  paDeg: number;
}

export interface SearchPatternInput {
  raDeg: number;
  decDeg: number;
  /** 1-sigma semi-axes, arcsec, and position angle of the major axis, deg east of north. */
  majorArcsec: number;
  minorArcsec: number;
  paDeg: number;
  /** Side of the (square) usable field, arcsec. */
  fieldArcsec: number;
  overlapFraction?: number;
}

/** Pointings covering the 3-sigma ellipse (see the module note). */
export function searchPattern(input: SearchPatternInput): SearchPattern {
  requireFinite('raDeg', input.raDeg);
  requireFinite('decDeg', input.decDeg, -90, 90);
  requireFinite('majorArcsec', input.majorArcsec, 0);
  requireFinite('minorArcsec', input.minorArcsec, 0);
  requireFinite('paDeg', input.paDeg);
  requireFinite('fieldArcsec', input.fieldArcsec, Number.MIN_VALUE);
  const overlap = requireFinite('overlapFraction', input.overlapFraction ?? 0.1, 0, 0.9);
  const a = 3 * input.majorArcsec;
  const b = 3 * input.minorArcsec;
  const stride = input.fieldArcsec * (1 - overlap);
  const nU = Math.max(1, Math.ceil((2 * a - input.fieldArcsec) / stride + 1 - 1e-9));
  const nV = Math.max(1, Math.ceil((2 * b - input.fieldArcsec) / stride + 1 - 1e-9));
  const half = input.fieldArcsec / 2;
  const pa = (input.paDeg * Math.PI) / 180;
  const dec0 = (input.decDeg * Math.PI) / 180;
  const ra0 = (input.raDeg * Math.PI) / 180;
  const tiles: { u: number; v: number }[] = [];
  for (let i = 0; i < nU; i++) {
    for (let j = 0; j < nV; j++) {
      const u = (i - (nU - 1) / 2) * stride;
      const v = (j - (nV - 1) / 2) * stride;
      // Nearest point of the tile to the ellipse centre, in ellipse axes; keep the tile if it is inside the ellipse.
      const nu = Math.max(0, Math.abs(u) - half);
      const nv = Math.max(0, Math.abs(v) - half);
      const inside = (a === 0 ? (nu === 0 ? 0 : Infinity) : (nu / a) ** 2) + (b === 0 ? (nv === 0 ? 0 : Infinity) : (nv / b) ** 2);
      if (inside <= 1) tiles.push({ u, v });
    }
  }
  tiles.sort((p, q) => Math.hypot(p.u, p.v) - Math.hypot(q.u, q.v) || p.u - q.u || p.v - q.v);
  const pointings = tiles.map(({ u, v }) => {
    const east = u * Math.sin(pa) + v * Math.cos(pa);
    const north = u * Math.cos(pa) - v * Math.sin(pa);
    // Standard coordinates (radians) to RA/Dec: the inverse gnomonic projection.
    const xi = (east / 3600) * (Math.PI / 180);
    const eta = (north / 3600) * (Math.PI / 180);
    const denominator = Math.cos(dec0) - eta * Math.sin(dec0);
    const ra = ra0 + Math.atan2(xi, denominator);
    const dec = Math.atan2(Math.sin(dec0) + eta * Math.cos(dec0), Math.hypot(xi, denominator));
    const raDeg = (ra * 180) / Math.PI;
    return {
      raDeg: ((raDeg % 360) + 360) % 360,
      decDeg: (dec * 180) / Math.PI,
      offsetEastArcsec: Math.round(east * 10) / 10,
      offsetNorthArcsec: Math.round(north * 10) / 10,
    };
  });
  return { pointings, fieldArcsec: input.fieldArcsec, overlapFraction: overlap, semiMajor3SigmaArcsec: a, semiMinor3SigmaArcsec: b, paDeg: input.paDeg };
}
