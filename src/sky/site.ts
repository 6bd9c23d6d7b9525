import * as Astronomy from 'astronomy-engine';
import type { GeodeticLocation } from '../config/schema.js';
import { SkyInputError, requireDate, requireFinite } from './errors.js';
import './time-scale.js'; // installs TT from the leap-second table into astronomy-engine

/**
 * Site geometry: from a geodetic site and astrometric ICRS RA/Dec to apparent
 * horizontal coordinates, sidereal time, hour angle, airmass and parallactic angle.
 * Time scales, precession, nutation, Earth rotation and refraction come from
 * astronomy-engine; this module adds annual + diurnal aberration for a fixed
 * direction and the conversions in our units (degrees and hours at the edges).
 */

const DEG = Math.PI / 180;
const HOURS_PER_DEG = 1 / 15;

/** A 3-vector in a named frame; plain numbers so it can be cached without the library's classes. */
export type Vec3 = readonly [number, number, number];

/** Apparent horizontal coordinates: altitude above the horizon, azimuth from north through east, degrees. */
export interface Horizontal {
  altDeg: number;
  azDeg: number;
}

export interface RefractionOption {
  /** Apply astronomy-engine's 'normal' refraction (Saemundsson 1986, Meeus eq. 16.4). Default true. */
  refraction?: boolean;
}

/** Validates a geodetic location and builds the astronomy-engine observer (WGS84, degrees, metres). */
export function observerFromLocation(location: GeodeticLocation): Astronomy.Observer {
  const latDeg = requireFinite('location.latDeg', location.latDeg, -90, 90);
  const lonDeg = requireFinite('location.lonDeg', location.lonDeg, -180, 360);
  const heightM = requireFinite('location.heightM', location.heightM, -500, 10_000);
  return new Astronomy.Observer(latDeg, normalizeLongitudeDeg(lonDeg), heightM);
}

/** Longitude east-positive in (-180, 180]. */
function normalizeLongitudeDeg(lonDeg: number): number {
  let lon = lonDeg % 360;
  if (lon > 180) lon -= 360;
  if (lon <= -180) lon += 360;
  return lon;
}

/** Validates a UTC instant and converts it to astronomy-engine's time (UT1 = UTC; TT from the leap-second table, src/sky/time-scale.ts). */
export function astroTimeFromUtc(timeUtc: Date, field = 'timeUtc'): Astronomy.AstroTime {
  requireDate(field, timeUtc);
  return Astronomy.MakeTime(timeUtc);
}

/** Unit vector of a direction given by RA/Dec in degrees (same frame as the angles). */
export function unitVectorFromRaDec(raDeg: number, decDeg: number): Vec3 {
  const ra = raDeg * DEG;
  const dec = decDeg * DEG;
  const cosDec = Math.cos(dec);
  return [cosDec * Math.cos(ra), cosDec * Math.sin(ra), Math.sin(dec)];
}

/** RA (0..360) and Dec (-90..90) in degrees of a vector. */
export function raDecFromVector(v: Vec3): { raDeg: number; decDeg: number } {
  const [x, y, z] = v;
  let raDeg = Math.atan2(y, x) / DEG;
  if (raDeg < 0) raDeg += 360;
  const decDeg = Math.atan2(z, Math.hypot(x, y)) / DEG;
  return { raDeg, decDeg };
}

/** Applies a rotation given in astronomy-engine's layout (same index order as Astronomy.RotateVector). */
export function rotateVector(r: ReadonlyArray<ReadonlyArray<number>>, v: Vec3): Vec3 {
  return [
    r[0]![0]! * v[0] + r[1]![0]! * v[1] + r[2]![0]! * v[2],
    r[0]![1]! * v[0] + r[1]![1]! * v[1] + r[2]![1]! * v[2],
    r[0]![2]! * v[0] + r[1]![2]! * v[1] + r[2]![2]! * v[2],
  ];
}

/** Angle between two vectors, degrees (atan2 form, accurate at small and large angles). */
export function angleBetweenDeg(a: Vec3, b: Vec3): number {
  const cx = a[1] * b[2] - a[2] * b[1];
  const cy = a[2] * b[0] - a[0] * b[2];
  const cz = a[0] * b[1] - a[1] * b[0];
  const dot = a[0] * b[0] + a[1] * b[1] + a[2] * b[2];
  return Math.atan2(Math.hypot(cx, cy, cz), dot) / DEG;
}

/**
 * Angular separation of two RA/Dec directions in degrees (any common frame).
 * Method: angle between unit vectors via atan2(|a x b|, a . b), exact at all separations.
 */
export function angularSeparationDeg(ra1Deg: number, dec1Deg: number, ra2Deg: number, dec2Deg: number): number {
  requireFinite('ra1Deg', ra1Deg);
  requireFinite('dec1Deg', dec1Deg, -90, 90);
  requireFinite('ra2Deg', ra2Deg);
  requireFinite('dec2Deg', dec2Deg, -90, 90);
  return angleBetweenDeg(unitVectorFromRaDec(ra1Deg, dec1Deg), unitVectorFromRaDec(ra2Deg, dec2Deg));
}

/**
 * Everything about a site at one instant that does not depend on the target: the rotation
 * ICRS(J2000) -> true equator of date, the observer's barycentric velocity for aberration,
 * the local apparent sidereal time and the geodetic latitude (which together give the
 * horizon). Plain data, so a frame can also be interpolated between exact ones (windows do).
 */
export interface SiteFrame {
  readonly timeUtc: Date;
  /** Geodetic latitude, degrees (the local vertical, as astronomy-engine's horizon uses). */
  readonly latDeg: number;
  /** Local apparent sidereal time, hours [0, 24). */
  readonly localSiderealTimeH: number;
  /** Precession-nutation matrix, astronomy-engine layout (rot[i][j]: column i, row j). */
  readonly eqjToEqd: ReadonlyArray<ReadonlyArray<number>>;
  /** Observer's barycentric velocity (Earth + rotation), ICRS axes, in units of c. */
  readonly velocityOverC: Vec3;
}

/** An exact frame from astronomy-engine, with what the Sun and Moon computations also need. */
export interface ExactSiteFrame extends SiteFrame {
  readonly time: Astronomy.AstroTime;
  readonly observer: Astronomy.Observer;
  /** Observer's geocentric position, ICRS axes, au. */
  readonly observerGeocentricAu: Vec3;
}

/**
 * Builds the site frame at `timeUtc`. Methods: precession (IAU 2006) and nutation (IAU 2000B)
 * and Greenwich apparent sidereal time from astronomy-engine (Rotation_EQJ_EQD, SiderealTime);
 * the observer's velocity is the Earth's barycentric velocity (BaryState) plus the diurnal
 * velocity of the site (ObserverState).
 */
export function siteFrameAt(location: GeodeticLocation, timeUtc: Date): ExactSiteFrame {
  const observer = observerFromLocation(location);
  const time = astroTimeFromUtc(timeUtc);
  const earth = Astronomy.BaryState(Astronomy.Body.Earth, time);
  const site = Astronomy.ObserverState(time, observer, false);
  const c = Astronomy.C_AUDAY;
  const lstH = wrapHours24(Astronomy.SiderealTime(time) + observer.longitude * HOURS_PER_DEG);
  return {
    timeUtc,
    latDeg: observer.latitude,
    localSiderealTimeH: lstH,
    eqjToEqd: Astronomy.Rotation_EQJ_EQD(time).rot,
    velocityOverC: [(earth.vx + site.vx) / c, (earth.vy + site.vy) / c, (earth.vz + site.vz) / c],
    time,
    observer,
    observerGeocentricAu: [site.x, site.y, site.z],
  };
}

function wrapHours24(h: number): number {
  const w = h % 24;
  return w < 0 ? w + 24 : w;
}

/** Hours wrapped to [-12, 12). */
export function wrapHours12(h: number): number {
  return wrapHours24(h + 12) - 12;
}

/**
 * Applies stellar aberration to an astrometric unit vector for an observer moving at
 * `velocityOverC` (Explanatory Supplement 1992, eq. 3.252-3, first order in v/c; the
 * neglected second-order term is below 0.001 arcsec for Earth's speed).
 */
export function aberrate(unit: Vec3, velocityOverC: Vec3): Vec3 {
  const x = unit[0] + velocityOverC[0];
  const y = unit[1] + velocityOverC[1];
  const z = unit[2] + velocityOverC[2];
  const n = Math.hypot(x, y, z);
  return [x / n, y / n, z / n];
}

/** A target in a site frame: apparent place of date, horizontal coordinates and hour angle. */
export interface ApparentTarget {
  /** Apparent direction, true equator and equinox of date (unit vector). */
  eqdUnit: Vec3;
  /** Apparent direction in the horizon frame before refraction: x north, y west, z zenith. */
  horUnit: Vec3;
  raOfDateDeg: number;
  decOfDateDeg: number;
  /** Apparent altitude (refracted unless refraction was off), degrees. */
  altDeg: number;
  /** Altitude without refraction, degrees. */
  geometricAltDeg: number;
  /** Azimuth from north through east, degrees [0, 360). */
  azDeg: number;
  /** Hour angle, hours, west positive, [-12, 12). */
  hourAngleH: number;
}

/**
 * Apparent place and horizontal coordinates of an astrometric ICRS direction in a site frame.
 * Method: aberration (see `aberrate`), astronomy-engine's precession-nutation matrix, the
 * horizon from local apparent sidereal time and geodetic latitude (apparentFromEqd), then its
 * 'normal' refraction (Saemundsson 1986 as in Meeus ch. 16).
 */
export function apparentInFrame(frame: SiteFrame, raDeg: number, decDeg: number, options: RefractionOption = {}): ApparentTarget {
  requireFinite('raDeg', raDeg);
  requireFinite('decDeg', decDeg, -90, 90);
  const astrometric = unitVectorFromRaDec(raDeg, decDeg);
  const eqdUnit = rotateVector(frame.eqjToEqd, aberrate(astrometric, frame.velocityOverC));
  return apparentFromEqd(frame, eqdUnit, options.refraction ?? true);
}

/** Horizontal coordinates and hour angle of an apparent direction of date (unit vector) in a site frame. */
export function apparentFromEqd(frame: SiteFrame, eqdUnit: Vec3, refraction: boolean): ApparentTarget {
  // Horizon basis in the equator of date: zenith at (RA = LAST, Dec = geodetic latitude), north, west
  // (the same vectors astronomy-engine's Rotation_EQD_HOR spins by Greenwich sidereal time).
  const last = frame.localSiderealTimeH * 15 * DEG;
  const phi = frame.latDeg * DEG;
  const cl = Math.cos(last);
  const sl = Math.sin(last);
  const cp = Math.cos(phi);
  const sp = Math.sin(phi);
  const [x, y, z] = eqdUnit;
  const horUnit: Vec3 = [-sp * cl * x - sp * sl * y + cp * z, sl * x - cl * y, cp * cl * x + cp * sl * y + sp * z];
  const { raDeg: raOfDateDeg, decDeg: decOfDateDeg } = raDecFromVector(eqdUnit);
  const geometricAltDeg = Math.atan2(horUnit[2], Math.hypot(horUnit[0], horUnit[1])) / DEG;
  // Horizon frame: x north, y west; azimuth eastward from north.
  let azDeg = Math.atan2(-horUnit[1], horUnit[0]) / DEG;
  if (azDeg < 0) azDeg += 360;
  const altDeg = refraction ? geometricAltDeg + Astronomy.Refraction('normal', geometricAltDeg) : geometricAltDeg;
  return {
    eqdUnit,
    horUnit,
    raOfDateDeg,
    decOfDateDeg,
    altDeg,
    geometricAltDeg,
    azDeg,
    hourAngleH: wrapHours12(frame.localSiderealTimeH - raOfDateDeg * HOURS_PER_DEG),
  };
}

/**
 * Apparent altitude and azimuth (from north through east), degrees, of a target given by
 * astrometric ICRS RA/Dec as seen from the site (topocentric), at `timeUtc`.
 * Includes annual and diurnal aberration, precession, nutation and (by default)
 * refraction; accuracy is that of astronomy-engine (sub-arcsecond) plus the refraction model.
 */
export function horizontalFromIcrs(
  location: GeodeticLocation,
  timeUtc: Date,
  raDeg: number,
  decDeg: number,
  options: RefractionOption = {},
): Horizontal {
  const target = apparentInFrame(siteFrameAt(location, timeUtc), raDeg, decDeg, options);
  return { altDeg: target.altDeg, azDeg: target.azDeg };
}

/**
 * Altitude and azimuth (from north through east), degrees, of a direction already given as
 * apparent RA/Dec of date (true equator and equinox), e.g. from an almanac.
 * Method: astronomy-engine Horizon (NOVAS equ2hor, Greenwich apparent sidereal time).
 */
export function horizontalFromOfDate(
  location: GeodeticLocation,
  timeUtc: Date,
  raOfDateDeg: number,
  decOfDateDeg: number,
  options: RefractionOption = {},
): Horizontal {
  requireFinite('raOfDateDeg', raOfDateDeg);
  requireFinite('decOfDateDeg', decOfDateDeg, -90, 90);
  const hor = Astronomy.Horizon(
    astroTimeFromUtc(timeUtc),
    observerFromLocation(location),
    raOfDateDeg * HOURS_PER_DEG,
    decOfDateDeg,
    (options.refraction ?? true) ? 'normal' : undefined,
  );
  return { altDeg: hor.altitude, azDeg: hor.azimuth };
}

/** Greenwich apparent sidereal time, hours [0, 24) (astronomy-engine: ERA-based GMST + equation of the equinoxes). */
export function greenwichApparentSiderealTimeH(timeUtc: Date): number {
  return Astronomy.SiderealTime(astroTimeFromUtc(timeUtc));
}

/**
 * Greenwich mean sidereal time, hours [0, 24): apparent sidereal time minus the equation of
 * the equinoxes (delta-psi cos(epsilon), Meeus ch. 12), both from astronomy-engine.
 */
export function greenwichMeanSiderealTimeH(timeUtc: Date): number {
  const time = astroTimeFromUtc(timeUtc);
  const equationOfEquinoxesS = Astronomy.e_tilt(time).ee;
  return wrapHours24(Astronomy.SiderealTime(time) - equationOfEquinoxesS / 3600);
}

/** Local apparent sidereal time at the site, hours [0, 24) (Greenwich apparent + east longitude / 15). */
export function localSiderealTimeH(location: GeodeticLocation, timeUtc: Date): number {
  return siteFrameAt(location, timeUtc).localSiderealTimeH;
}

/**
 * Local hour angle, hours, west positive, in [-12, 12): local apparent sidereal time minus
 * the apparent right ascension of date of the ICRS target (aberration, precession, nutation).
 */
export function hourAngleH(location: GeodeticLocation, timeUtc: Date, raDeg: number, decDeg: number): number {
  return apparentInFrame(siteFrameAt(location, timeUtc), raDeg, decDeg).hourAngleH;
}

/**
 * Parallactic angle q, degrees in (-180, 180], from the hour angle (hours, west positive),
 * the declination of date and the geodetic latitude: tan q = sin H / (tan phi cos d - sin d cos H)
 * (Meeus, Astronomical Algorithms, eq. 14.1). Positive west of the meridian; undefined at the pole.
 */
export function parallacticAngleFromHourAngleDeg(hourAngleHours: number, decDeg: number, latDeg: number): number {
  requireFinite('hourAngleH', hourAngleHours);
  requireFinite('decDeg', decDeg, -90, 90);
  requireFinite('latDeg', latDeg, -90, 90);
  const h = hourAngleHours * 15 * DEG;
  const phi = latDeg * DEG;
  const d = decDeg * DEG;
  return Math.atan2(Math.sin(h), Math.tan(phi) * Math.cos(d) - Math.sin(d) * Math.cos(h)) / DEG;
}

/**
 * Parallactic angle, degrees, of an ICRS target at the site and time (Meeus eq. 14.1 applied to the
 * apparent place of date): the angle at the target from the direction to the north celestial
 * pole to the direction to the zenith, positive when the target is west of the meridian.
 */
export function parallacticAngleDeg(location: GeodeticLocation, timeUtc: Date, raDeg: number, decDeg: number): number {
  const target = apparentInFrame(siteFrameAt(location, timeUtc), raDeg, decDeg);
  return parallacticAngleFromHourAngleDeg(target.hourAngleH, target.decOfDateDeg, location.latDeg);
}

/**
 * Relative optical airmass for an apparent (refracted) altitude in degrees, by Kasten & Young (1989),
 * Applied Optics 28, 4735, eq. 3: X = 1 / (sin h + 0.50572 (h + 6.07995)^-1.6364), h in degrees.
 * Valid from the zenith (X = 1) to the horizon (X ~ 37.9); the paper gives its fit as within
 * 0.5 % of its ISO-atmosphere table. Below the horizon there is no airmass: an error is thrown.
 */
export function airmassKastenYoung(altitudeDeg: number): number {
  requireFinite('altitudeDeg', altitudeDeg);
  if (altitudeDeg < 0 || altitudeDeg > 90) {
    throw new SkyInputError('altitudeDeg', altitudeDeg, 'airmass is defined for apparent altitudes 0..90 deg');
  }
  return 1 / (Math.sin(altitudeDeg * DEG) + 0.50572 * Math.pow(altitudeDeg + 6.07995, -1.6364));
}

/**
 * Apparent altitude, degrees, for which the Kasten & Young airmass equals `airmass` (>= 1).
 * Method: bisection on the monotonic formula to 1e-9 deg.
 */
export function altitudeForAirmassDeg(airmass: number): number {
  requireFinite('airmass', airmass, 1, 37);
  let lo = 0;
  let hi = 90;
  while (hi - lo > 1e-9) {
    const mid = (lo + hi) / 2;
    if (airmassKastenYoung(mid) > airmass) lo = mid;
    else hi = mid;
  }
  return (lo + hi) / 2;
}
