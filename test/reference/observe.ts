import { Body, Equator, Horizon, Observer, ObserverVector, RotateVector, Rotation_EQJ_EQD, Vector } from 'astronomy-engine';
import { referenceAstroTime, ttDaysOfUtc } from './reference-time.js';
import { EARTH_BODY, LIGHT_AU_PER_DAY, bodyPositions } from './solar-system.js';

/** A site: geodetic WGS84 latitude and longitude (deg, east positive), height (m). */
export interface ReferenceSite {
  readonly name: string;
  readonly latDeg: number;
  readonly lonDeg: number;
  readonly heightM: number;
}

/** What a site sees of a truth at one UTC instant. */
export interface ReferencePlace {
  /** Astrometric ICRS (J2000 mean equator, light-time corrected, no aberration), degrees. */
  readonly raDeg: number;
  readonly decDeg: number;
  /** Topocentric distance at emission (light-time corrected), au. */
  readonly deltaAu: number;
  /** Heliocentric distance at emission, au. */
  readonly rAu: number;
  /** Sun-object-observer angle, degrees. */
  readonly phaseDeg: number;
  /** Sun-observer-object angle, degrees. */
  readonly elongationDeg: number;
}

const DEG = 180 / Math.PI;
const sub = (a: ArrayLike<number>, b: ArrayLike<number>): [number, number, number] => [a[0]! - b[0]!, a[1]! - b[1]!, a[2]! - b[2]!];
const norm = (a: readonly number[]): number => Math.hypot(a[0]!, a[1]!, a[2]!);
const angleDeg = (a: readonly number[], b: readonly number[]): number => {
  const c = (a[0]! * b[0]! + a[1]! * b[1]! + a[2]! * b[2]!) / (norm(a) * norm(b));
  return Math.acos(Math.max(-1, Math.min(1, c))) * DEG;
};

/** Barycentric EQJ position (au) of a site at a UTC instant: astronomy-engine's Earth plus its ObserverVector (WGS84). */
export function siteBarycentric(site: ReferenceSite, utcMs: number): [number, number, number] {
  const time = referenceAstroTime(utcMs);
  const bodies = bodyPositions(time.tt);
  const geo = ObserverVector(time, new Observer(site.latDeg, site.lonDeg, site.heightM), false);
  return [bodies[3 * EARTH_BODY]! + geo.x, bodies[3 * EARTH_BODY + 1]! + geo.y, bodies[3 * EARTH_BODY + 2]! + geo.z];
}

/**
 * The astrometric place of a truth from a site: light time solved by
 * iteration on the integrated trajectory itself (the object's barycentric
 * position at t - tau, tau = |r(t - tau) - o(t)| / c, to 1e-12 day), the
 * direction from the observer's barycentric position at t. No aberration, no
 * light deflection (the astrometric place's convention).
 */
export function placeOf(truth: { stateAt(tt: number): ArrayLike<number> }, site: ReferenceSite, utcMs: number): ReferencePlace {
  const tt = ttDaysOfUtc(utcMs);
  const o = siteBarycentric(site, utcMs);
  let tau = norm(sub(truth.stateAt(tt), o)) / LIGHT_AU_PER_DAY;
  let emitted = truth.stateAt(tt - tau);
  for (let k = 0; k < 10; k++) {
    const next = norm(sub(emitted, o)) / LIGHT_AU_PER_DAY;
    const done = Math.abs(next - tau) < 1e-12;
    tau = next;
    emitted = truth.stateAt(tt - tau);
    if (done) break;
  }
  const d = sub(emitted, o);
  const sun = bodyPositions(tt - tau).subarray(0, 3);
  const fromSun = sub(emitted, sun);
  const raDeg = ((Math.atan2(d[1], d[0]) * DEG) % 360 + 360) % 360;
  return {
    raDeg,
    decDeg: Math.asin(d[2] / norm(d)) * DEG,
    deltaAu: norm(d),
    rAu: norm(fromSun),
    phaseDeg: angleDeg(fromSun.map((x) => -x), d.map((x) => -x)),
    elongationDeg: angleDeg(sub(bodyPositions(tt).subarray(0, 3), o), d),
  };
}

/**
 * Altitude (deg, refracted, astronomy-engine 'normal' refraction) of an
 * astrometric direction and of the Sun from a site: the direction is carried
 * to the true equator of date (Rotation_EQJ_EQD) and to the horizon by
 * astronomy-engine's Horizon. Aberration (< 21") is ignored: this only decides
 * whether a survey could have observed the object.
 */
export function altitudes(site: ReferenceSite, utcMs: number, raDeg: number, decDeg: number): { objectDeg: number; sunDeg: number } {
  const time = referenceAstroTime(utcMs);
  const observer = new Observer(site.latDeg, site.lonDeg, site.heightM);
  const c = Math.cos(decDeg / DEG);
  const j2000 = new Vector(c * Math.cos(raDeg / DEG), c * Math.sin(raDeg / DEG), Math.sin(decDeg / DEG), time);
  const ofDate = RotateVector(Rotation_EQJ_EQD(time), j2000);
  const raH = ((Math.atan2(ofDate.y, ofDate.x) * DEG + 360) % 360) / 15;
  const decOfDate = Math.asin(ofDate.z / Math.hypot(ofDate.x, ofDate.y, ofDate.z)) * DEG;
  const sun = Equator(Body.Sun, time, observer, true, true);
  return {
    objectDeg: Horizon(time, observer, raH, decOfDate, 'normal').altitude,
    sunDeg: Horizon(time, observer, sun.ra, sun.dec, 'normal').altitude,
  };
}
