/**
 * Heliocentric state from elliptic elements, for the reference's ordinary
 * objects: Kepler's equation by Newton's method from E = M + e sin M
 * (Danby 1988, Fundamentals of Celestial Mechanics, sect. 6.6), position and
 * velocity in the orbital plane, rotated by (peri, i, node) into the J2000
 * ecliptic and then by the J2000 obliquity 84381.448" (IAU 1976) into the
 * J2000 equator. Units: au, au/day, degrees; gm in au^3/day^2.
 */
export interface ReferenceElements {
  readonly aAu: number;
  readonly e: number;
  readonly iDeg: number;
  readonly nodeDeg: number;
  readonly periDeg: number;
  /** Mean anomaly at the epoch, degrees. */
  readonly meanAnomalyDeg: number;
}

const OBLIQUITY_J2000_RAD = ((84381.448 / 3600) * Math.PI) / 180;

export function heliocentricStateOf(el: ReferenceElements, gm: number): Float64Array {
  if (!(el.e >= 0 && el.e < 1)) throw new RangeError(`reference elements: e = ${el.e}, expected an ellipse`);
  const rad = Math.PI / 180;
  const M = el.meanAnomalyDeg * rad;
  let E = M + el.e * Math.sin(M);
  for (let k = 0; k < 50; k++) {
    const dE = (E - el.e * Math.sin(E) - M) / (1 - el.e * Math.cos(E));
    E -= dE;
    if (Math.abs(dE) < 1e-15) break;
  }
  const a = el.aAu;
  const n = Math.sqrt(gm / a ** 3);
  const b = a * Math.sqrt(1 - el.e ** 2);
  const xp = a * (Math.cos(E) - el.e), yp = b * Math.sin(E);
  const edot = n / (1 - el.e * Math.cos(E));
  const vxp = -a * Math.sin(E) * edot, vyp = b * Math.cos(E) * edot;
  const [cw, sw] = [Math.cos(el.periDeg * rad), Math.sin(el.periDeg * rad)];
  const [cn, sn] = [Math.cos(el.nodeDeg * rad), Math.sin(el.nodeDeg * rad)];
  const [ci, si] = [Math.cos(el.iDeg * rad), Math.sin(el.iDeg * rad)];
  // Orbital plane -> ecliptic: Rz(node) Rx(i) Rz(peri).
  const px = [cn * cw - sn * sw * ci, sn * cw + cn * sw * ci, sw * si];
  const qx = [-cn * sw - sn * cw * ci, -sn * sw + cn * cw * ci, cw * si];
  const ecl = [0, 1, 2].map((k) => xp * px[k]! + yp * qx[k]!);
  const eclV = [0, 1, 2].map((k) => vxp * px[k]! + vyp * qx[k]!);
  const [ce, se] = [Math.cos(OBLIQUITY_J2000_RAD), Math.sin(OBLIQUITY_J2000_RAD)];
  const toEq = (v: number[]): number[] => [v[0]!, ce * v[1]! - se * v[2]!, se * v[1]! + ce * v[2]!];
  return Float64Array.from([...toEq(ecl), ...toEq(eclV)]);
}
