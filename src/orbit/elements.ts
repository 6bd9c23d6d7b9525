import { GM_SUN_AU3_PER_DAY2, OBLIQUITY_J2000_RAD, RAD_PER_DEG, DEG_PER_RAD } from './constants.js';
import { OrbitInputError, requireFinite, requireInRange, requirePositive } from './errors.js';
import {
  eccentricFromTrueAnomaly,
  hyperbolicFromTrueAnomaly,
  meanFromEccentricAnomaly,
  meanFromHyperbolicAnomaly,
  propagateTwoBody,
  type PositionVelocity,
} from './kepler.js';
import { cross, dot, norm, type Vec3 } from './vector.js';

/**
 * Orbital elements <-> state vectors. Two kinds of elements:
 * - classical (a, e, i, node, argument of periapsis, true anomaly), frame- and
 *   unit-agnostic, after Vallado's RV2COE / COE2RV (Algorithms 9 and 10);
 * - perihelion ("cometary") elements of the notice orbit block
 *   {q, e, i, node, peri, tp}, heliocentric, ecliptic and mean equinox J2000
 *   (obliquity 84381.448 arcsec, IAU 1976, as published elements use),
 *   valid for every eccentricity.
 * Vallado algorithm and equation numbers (4th ed.) are from memory.
 */

/** Heliocentric state, equatorial J2000 (EQJ, ICRS-aligned) axes: au and au/day at TT `tt` (days since J2000.0). */
export interface HeliocentricState {
  readonly tt: number;
  readonly x: number;
  readonly y: number;
  readonly z: number;
  readonly vx: number;
  readonly vy: number;
  readonly vz: number;
}

/** Perihelion elements, heliocentric ecliptic J2000; angles in degrees, q in au, tp in TT days since J2000.0. */
export interface PerihelionElements {
  readonly qAu: number;
  readonly e: number;
  readonly iDeg: number;
  readonly nodeDeg: number;
  readonly periDeg: number;
  readonly tpTt: number;
}

/** Classical elements; length in the caller's unit (Infinity for a parabola), angles in radians. */
export interface ClassicalElements {
  readonly semiMajorAxis: number;
  readonly semiLatusRectum: number;
  readonly e: number;
  readonly iRad: number;
  readonly nodeRad: number;
  readonly argPeriRad: number;
  readonly trueAnomalyRad: number;
}

const TWO_PI = 2 * Math.PI;
const wrap2Pi = (a: number): number => ((a % TWO_PI) + TWO_PI) % TWO_PI;
/** Below this |e - 1| the orbit is treated as a parabola in the anomaly formulas. */
const PARABOLIC_BAND = 1e-9;

/**
 * Classical elements from a position and velocity (Vallado, Fundamentals of
 * Astrodynamics and Applications, Algorithm 9, RV2COE). Circular orbits get
 * argument of periapsis 0 (anomaly from the node); equatorial orbits get node 0
 * (periapsis longitude from the x axis).
 */
export function classicalFromState(state: PositionVelocity, gm: number): ClassicalElements {
  requirePositive('gm', gm);
  const { r, v } = state;
  for (const [k, val] of Object.entries({ x: r.x, y: r.y, z: r.z, vx: v.x, vy: v.y, vz: v.z })) requireFinite(k, val);
  const rMag = norm(r);
  if (!(rMag > 0)) throw new OrbitInputError('r', rMag, 'position must be non-zero');
  const h = cross(r, v);
  const hMag = norm(h);
  if (!(hMag > 0)) throw new OrbitInputError('v', norm(v), 'rectilinear motion (r parallel to v) has no orbital plane');
  const nodeVec: Vec3 = { x: -h.y, y: h.x, z: 0 };
  const nMag = norm(nodeVec);
  const v2 = dot(v, v);
  const rv = dot(r, v);
  const eVec: Vec3 = {
    x: ((v2 - gm / rMag) * r.x - rv * v.x) / gm,
    y: ((v2 - gm / rMag) * r.y - rv * v.y) / gm,
    z: ((v2 - gm / rMag) * r.z - rv * v.z) / gm,
  };
  const e = norm(eVec);
  const p = (hMag * hMag) / gm;
  const energy = v2 / 2 - gm / rMag;
  const semiMajorAxis = Math.abs(e - 1) < PARABOLIC_BAND ? Infinity : -gm / (2 * energy);
  const iRad = Math.acos(Math.max(-1, Math.min(1, h.z / hMag)));
  const equatorial = nMag < 1e-12 * hMag;
  const circular = e < 1e-12;
  let nodeRad = 0;
  if (!equatorial) nodeRad = wrap2Pi(Math.atan2(nodeVec.y, nodeVec.x));
  let argPeriRad = 0;
  let trueAnomalyRad: number;
  // Angles measured in the orbital plane with atan2 for accuracy at 0 and pi.
  const hUnit: Vec3 = { x: h.x / hMag, y: h.y / hMag, z: h.z / hMag };
  const angleInPlane = (from: Vec3, to: Vec3): number => wrap2Pi(Math.atan2(dot(cross(from, to), hUnit), dot(from, to)));
  const nodeDir: Vec3 = equatorial ? { x: 1, y: 0, z: 0 } : nodeVec;
  if (!circular) {
    argPeriRad = angleInPlane(nodeDir, eVec);
    trueAnomalyRad = angleInPlane(eVec, r);
  } else {
    trueAnomalyRad = angleInPlane(nodeDir, r);
  }
  return { semiMajorAxis, semiLatusRectum: p, e, iRad, nodeRad, argPeriRad, trueAnomalyRad };
}

/** Position and velocity from classical elements (Vallado Algorithm 10, COE2RV), via the semi-latus rectum so parabolas work. */
export function stateFromClassical(el: ClassicalElements, gm: number): PositionVelocity {
  requirePositive('gm', gm);
  requirePositive('semiLatusRectum', el.semiLatusRectum);
  const { e, iRad, nodeRad, argPeriRad, trueAnomalyRad: nu } = el;
  const p = el.semiLatusRectum;
  const denom = 1 + e * Math.cos(nu);
  if (!(denom > 0)) throw new OrbitInputError('trueAnomalyRad', nu, `beyond the asymptote of an orbit with e = ${e}`);
  const rPf = p / denom;
  const sqrtMuP = Math.sqrt(gm / p);
  return orientPerifocal(
    { x: rPf * Math.cos(nu), y: rPf * Math.sin(nu), z: 0 },
    { x: -sqrtMuP * Math.sin(nu), y: sqrtMuP * (e + Math.cos(nu)), z: 0 },
    iRad,
    nodeRad,
    argPeriRad,
  );
}

/** Rotates perifocal vectors by R3(-node) R1(-i) R3(-argPeri) into the reference frame. */
function orientPerifocal(rPf: Vec3, vPf: Vec3, iRad: number, nodeRad: number, argPeriRad: number): PositionVelocity {
  const cO = Math.cos(nodeRad), sO = Math.sin(nodeRad);
  const ci = Math.cos(iRad), si = Math.sin(iRad);
  const cw = Math.cos(argPeriRad), sw = Math.sin(argPeriRad);
  const m11 = cO * cw - sO * sw * ci, m12 = -cO * sw - sO * cw * ci;
  const m21 = sO * cw + cO * sw * ci, m22 = -sO * sw + cO * cw * ci;
  const m31 = sw * si, m32 = cw * si;
  const apply = (a: Vec3): Vec3 => ({ x: m11 * a.x + m12 * a.y, y: m21 * a.x + m22 * a.y, z: m31 * a.x + m32 * a.y });
  return { r: apply(rPf), v: apply(vPf) };
}

const COS_OBL = Math.cos(OBLIQUITY_J2000_RAD);
const SIN_OBL = Math.sin(OBLIQUITY_J2000_RAD);

/** Ecliptic J2000 -> equatorial J2000 (rotation about x by the elements' J2000 obliquity, 84381.448 arcsec, IAU 1976). */
export function equatorialFromEcliptic(a: Vec3): Vec3 {
  return { x: a.x, y: COS_OBL * a.y - SIN_OBL * a.z, z: SIN_OBL * a.y + COS_OBL * a.z };
}

/** Equatorial J2000 -> ecliptic J2000, the inverse of equatorialFromEcliptic. */
export function eclipticFromEquatorial(a: Vec3): Vec3 {
  return { x: a.x, y: COS_OBL * a.y + SIN_OBL * a.z, z: -SIN_OBL * a.y + COS_OBL * a.z };
}

/** Throws OrbitInputError unless the perihelion elements are finite and physical. */
export function checkPerihelionElements(el: PerihelionElements): void {
  requirePositive('orbit.q', el.qAu);
  requireInRange('orbit.e', el.e, 0, 50);
  requireInRange('orbit.i', el.iDeg, 0, 180);
  requireFinite('orbit.node', el.nodeDeg);
  requireFinite('orbit.peri', el.periDeg);
  requireFinite('orbit.tp', el.tpTt);
}

/**
 * Heliocentric EQJ state (au, au/day) at TT `tt` from perihelion elements
 * (ecliptic J2000). Method: the perihelion state (r = q, v = sqrt(GM(1+e)/q)
 * along the track) is propagated by universal variables over tt - tp, so
 * ellipses, parabolas and hyperbolas share one exact two-body path (Vallado
 * Algorithm 8); then rotated by (peri, i, node) and the J2000 obliquity.
 * Default GM is the Sun's (an asteroid's own mass is negligible).
 */
export function stateFromPerihelionElements(el: PerihelionElements, tt: number, gm: number = GM_SUN_AU3_PER_DAY2): HeliocentricState {
  checkPerihelionElements(el);
  requireFinite('tt', tt);
  const vPeri = Math.sqrt((gm * (1 + el.e)) / el.qAu);
  const peri = orientPerifocal(
    { x: el.qAu, y: 0, z: 0 },
    { x: 0, y: vPeri, z: 0 },
    el.iDeg * RAD_PER_DEG,
    el.nodeDeg * RAD_PER_DEG,
    el.periDeg * RAD_PER_DEG,
  );
  const ecl = propagateTwoBody(peri, tt - el.tpTt, gm);
  const r = equatorialFromEcliptic(ecl.r);
  const v = equatorialFromEcliptic(ecl.v);
  return { tt, x: r.x, y: r.y, z: r.z, vx: v.x, vy: v.y, vz: v.z };
}

/**
 * Osculating perihelion elements (ecliptic J2000) of a heliocentric EQJ state.
 * Time of perihelion from the anomaly: Kepler's equation for ellipses (Meeus
 * ch. 30), its hyperbolic form (Vallado 2-38) and Barker's equation within
 * 1e-9 of e = 1 (Meeus ch. 34). For an ellipse tp is the perihelion nearest
 * the state's time. Near e = 1 (|e - 1| < 1e-4) tp loses digits to cancellation
 * (about 1e-10 / |e - 1| days relative to the time from perihelion).
 */
export function perihelionElementsFromState(state: HeliocentricState, gm: number = GM_SUN_AU3_PER_DAY2): PerihelionElements {
  requireFinite('tt', state.tt);
  const ecl = {
    r: eclipticFromEquatorial({ x: state.x, y: state.y, z: state.z }),
    v: eclipticFromEquatorial({ x: state.vx, y: state.vy, z: state.vz }),
  };
  const c = classicalFromState(ecl, gm);
  const qAu = c.semiLatusRectum / (1 + c.e);
  const nu = c.trueAnomalyRad > Math.PI ? c.trueAnomalyRad - TWO_PI : c.trueAnomalyRad;
  let sincePerihelion: number;
  if (Math.abs(c.e - 1) < PARABOLIC_BAND) {
    const d = Math.tan(nu / 2);
    sincePerihelion = Math.sqrt((2 * qAu ** 3) / gm) * (d + (d * d * d) / 3);
  } else if (c.e < 1) {
    const a = c.semiMajorAxis;
    sincePerihelion = meanFromEccentricAnomaly(eccentricFromTrueAnomaly(nu, c.e), c.e) / Math.sqrt(gm / a ** 3);
  } else {
    const a = -c.semiMajorAxis;
    sincePerihelion = meanFromHyperbolicAnomaly(hyperbolicFromTrueAnomaly(nu, c.e), c.e) / Math.sqrt(gm / a ** 3);
  }
  return {
    qAu,
    e: c.e,
    iDeg: c.iRad * DEG_PER_RAD,
    nodeDeg: c.nodeRad * DEG_PER_RAD,
    periDeg: c.argPeriRad * DEG_PER_RAD,
    tpTt: state.tt - sincePerihelion,
  };
}
