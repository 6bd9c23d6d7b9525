/**
 * A local sky frame around a reference direction and the azimuthal
 * equidistant projection onto it (Snyder 1987, Map Projections - A Working
 * Manual, USGS Prof. Paper 1395, ch. 25): xi to the east, eta to the north,
 * radians, with the distance from the centre equal to the true angle. Uniform
 * motion along a great circle through the centre projects to uniform motion
 * on a straight line, so rates at the centre are exactly dRA/dt cos Dec and dDec/dt.
 */
export type Vec3 = [number, number, number];

export interface TangentFrame {
  readonly centre: Vec3;
  readonly east: Vec3;
  readonly north: Vec3;
}

export function unitFromRaDec(raRad: number, decRad: number): Vec3 {
  const c = Math.cos(decRad);
  return [c * Math.cos(raRad), c * Math.sin(raRad), Math.sin(decRad)];
}

/** RA in [0, 2 pi) and Dec, radians, of a vector (any length > 0). */
export function raDecFromVector(v: Vec3): { raRad: number; decRad: number } {
  const ra = Math.atan2(v[1], v[0]);
  return { raRad: ra < 0 ? ra + 2 * Math.PI : ra, decRad: Math.atan2(v[2], Math.hypot(v[0], v[1])) };
}

/** The east/north frame at a direction; at the poles east is taken along +y. */
export function tangentFrame(centre: Vec3): TangentFrame {
  const n = Math.hypot(centre[0], centre[1], centre[2]);
  const c: Vec3 = [centre[0] / n, centre[1] / n, centre[2] / n];
  const rxy = Math.hypot(c[0], c[1]);
  const east: Vec3 = rxy > 1e-12 ? [-c[1] / rxy, c[0] / rxy, 0] : [0, 1, 0];
  const north: Vec3 = [c[1] * east[2] - c[2] * east[1], c[2] * east[0] - c[0] * east[2], c[0] * east[1] - c[1] * east[0]];
  return { centre: c, east, north };
}

/** Equidistant projection of a direction: [xi, eta] in radians. */
export function project(frame: TangentFrame, v: Vec3): [number, number] {
  const x = v[0] * frame.east[0] + v[1] * frame.east[1] + v[2] * frame.east[2];
  const y = v[0] * frame.north[0] + v[1] * frame.north[1] + v[2] * frame.north[2];
  const z = v[0] * frame.centre[0] + v[1] * frame.centre[1] + v[2] * frame.centre[2];
  const s = Math.hypot(x, y);
  if (s === 0) return [0, 0];
  const angle = Math.atan2(s, z);
  return [(x / s) * angle, (y / s) * angle];
}

/** Inverse of project: the unit vector at (xi, eta) radians. */
export function unproject(frame: TangentFrame, xi: number, eta: number): Vec3 {
  const angle = Math.hypot(xi, eta);
  if (angle === 0) return [...frame.centre];
  const k = Math.sin(angle) / angle;
  const c = Math.cos(angle);
  return [
    c * frame.centre[0] + k * (xi * frame.east[0] + eta * frame.north[0]),
    c * frame.centre[1] + k * (xi * frame.east[1] + eta * frame.north[1]),
    c * frame.centre[2] + k * (xi * frame.east[2] + eta * frame.north[2]),
  ];
}
