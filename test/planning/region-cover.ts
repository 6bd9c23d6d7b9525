/**
 * How much one uncertainty region must grow to hold another: used to check that a first look's
 * region is never narrower than the full estimate's (first-look bench and test). Written for the
 * tests, apart from the project's code: a gnomonic tangent plane and the ellipse's sigma distance.
 */

const RAD = Math.PI / 180;

export interface PlaceWithEllipse {
  ra: number;
  dec: number;
  /** 1-sigma semi-axes, arcsec; position angle of the major axis, deg east of north. */
  unc: { major: number; minor: number; pa: number } | null;
}

/** Offset of (ra, dec) from (ra0, dec0) on the tangent plane at (ra0, dec0), arcsec east and north (gnomonic projection). */
export function tangentOffsetArcsec(ra0: number, dec0: number, ra: number, dec: number): [number, number] {
  const d = (ra - ra0) * RAD;
  const c = Math.sin(dec0 * RAD) * Math.sin(dec * RAD) + Math.cos(dec0 * RAD) * Math.cos(dec * RAD) * Math.cos(d);
  const x = (Math.cos(dec * RAD) * Math.sin(d)) / c;
  const y = (Math.cos(dec0 * RAD) * Math.sin(dec * RAD) - Math.sin(dec0 * RAD) * Math.cos(dec * RAD) * Math.cos(d)) / c;
  return [(x / RAD) * 3600, (y / RAD) * 3600];
}

/** Sigma distance of an offset (arcsec east, north) in an ellipse. */
export function sigmaDistance(e: { major: number; minor: number; pa: number }, east: number, north: number): number {
  const pa = e.pa * RAD;
  const along = east * Math.sin(pa) + north * Math.cos(pa);
  const across = east * Math.cos(pa) - north * Math.sin(pa);
  return Math.hypot(along / e.major, across / e.minor);
}

/**
 * The least factor by which `outer`'s ellipse (about its own place) must be scaled so that its
 * 3-sigma region holds the 3-sigma edge of `inner` (about its own place), from 72 points of that
 * edge; NaN when either has no ellipse.
 */
export function coverFactor(outer: PlaceWithEllipse, inner: PlaceWithEllipse): number {
  if (!outer.unc || !inner.unc) return Number.NaN;
  const [dx, dy] = tangentOffsetArcsec(outer.ra, outer.dec, inner.ra, inner.dec);
  const f = inner.unc;
  const pa = f.pa * RAD;
  let worst = 0;
  for (let k = 0; k < 72; k++) {
    const a = (2 * Math.PI * k) / 72;
    const along = 3 * f.major * Math.cos(a);
    const across = 3 * f.minor * Math.sin(a);
    const east = dx + along * Math.sin(pa) + across * Math.cos(pa);
    const north = dy + along * Math.cos(pa) - across * Math.sin(pa);
    worst = Math.max(worst, sigmaDistance(outer.unc, east, north) / 3);
  }
  return worst;
}

/**
 * The largest 1-sigma major axis a request can carry at the demo sites: 9 pointings of the 13.3'
 * imager field in a line with 10 % overlap cover a 3-sigma semi-axis of 3271" (search-pattern.ts).
 */
export const PLANNABLE_MAJOR_ARCSEC = 1090;
