import { Body, HelioState, MakeTime, ObserverState } from 'astronomy-engine';
import type { GeodeticLocation } from '../config/schema.js';
import { airmassKastenYoung, apparentInFrame, observerFromLocation, siteFrameAt } from '../sky/site.js';
import { apparentMagnitudeHG } from '../photometry/magnitudes.js';
import { PhotometryInputError } from '../photometry/errors.js';
import { ARCSEC_PER_RAD, DEG_PER_RAD, GM_SUN_AU3_PER_DAY2, LIGHT_AU_PER_DAY, SECONDS_PER_DAY } from './constants.js';
import { stateFromPerihelionElements, type HeliocentricState, type PerihelionElements } from './elements.js';
import { OrbitConvergenceError, OrbitInputError, requireFinite } from './errors.js';
import { propagateEnsemble, type EnsembleTrajectory, type PropagationOptions } from './propagate.js';
import { ttFromUtc } from './time.js';
import type { Vec3 } from './vector.js';

/**
 * Topocentric astrometric ephemeris: ICRS RA/Dec as seen from a site on the
 * rotating Earth (or the geocentre), corrected for light time, without
 * aberration or light deflection (the astrometric place of the Explanatory
 * Supplement to the Astronomical Almanac, 1992, sect. 3.3), with sky-plane
 * rates, distances, phase angle, solar elongation, apparent alt/az, airmass and
 * the H-G magnitude.
 */

/** Where the ephemeris is seen from: a geodetic site (WGS84) or the Earth's centre. */
export type Viewpoint = GeodeticLocation | 'geocentre';

/** The observer at one instant: heliocentric EQJ position (au) and velocity (au/day), and the Sun's barycentric velocity. */
export interface ObserverGeometry {
  readonly timeUtc: Date;
  readonly tt: number;
  readonly position: Vec3;
  readonly velocity: Vec3;
  readonly sunBarycentricVelocity: Vec3;
}

/**
 * Observer geometry at a UTC instant: Earth's heliocentric state (astronomy-engine
 * HelioState, VSOP87) plus the site's geocentric state on the rotating Earth
 * (ObserverState: WGS84, IAU 2006 precession and nutation, Earth rotation angle),
 * both in EQJ axes.
 */
export function observerGeometry(viewpoint: Viewpoint, timeUtc: Date): ObserverGeometry {
  const time = MakeTime(timeUtc);
  const earth = HelioState(Body.Earth, time);
  const ssb = HelioState(Body.SSB, time);
  let sx = 0, sy = 0, sz = 0, svx = 0, svy = 0, svz = 0;
  if (viewpoint !== 'geocentre') {
    const site = ObserverState(time, observerFromLocation(viewpoint), false);
    sx = site.x; sy = site.y; sz = site.z; svx = site.vx; svy = site.vy; svz = site.vz;
  }
  return {
    timeUtc,
    tt: time.tt,
    position: { x: earth.x + sx, y: earth.y + sy, z: earth.z + sz },
    velocity: { x: earth.vx + svx, y: earth.vy + svy, z: earth.vz + svz },
    sunBarycentricVelocity: { x: -ssb.vx, y: -ssb.vy, z: -ssb.vz },
  };
}

/** One object's place as seen by one observer. */
export interface AstrometricPlace {
  /** Astrometric ICRS RA, deg [0, 360), and Dec, deg. */
  readonly raDeg: number;
  readonly decDeg: number;
  /** dRA/dt x cos Dec and dDec/dt, arcsec/s. */
  readonly raRateArcsecPerS: number;
  readonly decRateArcsecPerS: number;
  /** Observer-object distance at emission (light-time corrected), au. */
  readonly deltaAu: number;
  /** Sun-object distance at emission, au. */
  readonly rAu: number;
  /** Sun-object-observer angle, deg. */
  readonly phaseDeg: number;
  /** Sun-observer-object angle, deg. */
  readonly elongationDeg: number;
  /** Light time, days, and the iterations it took. */
  readonly lightTimeDays: number;
  readonly lightTimeIterations: number;
}

const LIGHT_TIME_TOLERANCE_DAYS = 1e-12; // 86 ns
const LIGHT_TIME_MAX_ITERATIONS = 10;

/**
 * Astrometric place of an object whose heliocentric EQJ state at the
 * observation instant is (r, v), au and au/day. Light time by fixed-point
 * iteration tau = |rho(tau)|/c, the emitting position being the second-order
 * Taylor expansion r - v tau + GM_S r tau^2 / (2 |r|^3) (the planets' share of
 * the acceleration shifts it by < 1e-12 au over a light time of 0.05 day), and
 * the Sun's barycentric motion over tau included so rho is a barycentric
 * difference. Rates differentiate rho including d(tau)/dt. The iteration
 * contracts by |v|/c ~ 1e-4 per step.
 */
export function astrometricPlace(r: Vec3, v: Vec3, observer: ObserverGeometry): AstrometricPlace {
  const o = observer.position;
  const rn = Math.hypot(r.x, r.y, r.z);
  const kSun = GM_SUN_AU3_PER_DAY2 / (2 * rn * rn * rn);
  const sv = observer.sunBarycentricVelocity;
  let tau = Math.hypot(r.x - o.x, r.y - o.y, r.z - o.z) / LIGHT_AU_PER_DAY;
  let ex = 0, ey = 0, ez = 0, px = 0, py = 0, pz = 0, rho = 0;
  let iterations = 0;
  for (;;) {
    iterations++;
    const q = kSun * tau * tau;
    ex = r.x - v.x * tau - q * r.x;
    ey = r.y - v.y * tau - q * r.y;
    ez = r.z - v.z * tau - q * r.z;
    px = ex - o.x - sv.x * tau;
    py = ey - o.y - sv.y * tau;
    pz = ez - o.z - sv.z * tau;
    rho = Math.hypot(px, py, pz);
    const next = rho / LIGHT_AU_PER_DAY;
    const change = Math.abs(next - tau);
    tau = next;
    if (change < LIGHT_TIME_TOLERANCE_DAYS) break;
    if (iterations >= LIGHT_TIME_MAX_ITERATIONS) {
      throw new OrbitConvergenceError(`light-time iteration did not converge (last change ${change} day at distance ${rho} au)`);
    }
  }
  // Velocity at emission: v - a_sun tau.
  const ka = 2 * kSun * tau;
  const vex = v.x + ka * r.x, vey = v.y + ka * r.y, vez = v.z + ka * r.z;
  const ux = px / rho, uy = py / rho, uz = pz / rho;
  const wx = vex - observer.velocity.x, wy = vey - observer.velocity.y, wz = vez - observer.velocity.z;
  const sx = vex + sv.x, sy = vey + sv.y, sz = vez + sv.z;
  const tauDot = (ux * wx + uy * wy + uz * wz) / LIGHT_AU_PER_DAY / (1 + (ux * sx + uy * sy + uz * sz) / LIGHT_AU_PER_DAY);
  const dx = wx - sx * tauDot, dy = wy - sy * tauDot, dz = wz - sz * tauDot;
  const rxy2 = px * px + py * py;
  const rxy = Math.sqrt(rxy2);
  const raRad = Math.atan2(py, px);
  const decRad = Math.atan2(pz, rxy);
  // d(RA)/dt cos(Dec) = (x y' - y x') / (rxy rho); d(Dec)/dt = (z' rxy^2 - z (x x' + y y')) / (rho^2 rxy).
  const raRate = (px * dy - py * dx) / (rxy * rho);
  const decRate = (dz * rxy2 - pz * (px * dx + py * dy)) / (rho * rho * rxy);
  const toArcsecPerS = ARCSEC_PER_RAD / SECONDS_PER_DAY;
  const rAu = Math.hypot(ex, ey, ez);
  // Phase: angle at the object between the Sun (-e) and the observer (-rho): cos = e.rho/(|e||rho|).
  const phaseDeg = angleDeg(ex, ey, ez, px, py, pz);
  // Elongation: angle at the observer between the Sun (-o) and the object (rho).
  const elongationDeg = angleDeg(-o.x, -o.y, -o.z, px, py, pz);
  return {
    raDeg: ((raRad * DEG_PER_RAD) % 360 + 360) % 360,
    decDeg: decRad * DEG_PER_RAD,
    raRateArcsecPerS: raRate * toArcsecPerS,
    decRateArcsecPerS: decRate * toArcsecPerS,
    deltaAu: rho,
    rAu,
    phaseDeg,
    elongationDeg,
    lightTimeDays: tau,
    lightTimeIterations: iterations,
  };
}

function angleDeg(ax: number, ay: number, az: number, bx: number, by: number, bz: number): number {
  const cx = ay * bz - az * by, cy = az * bx - ax * bz, cz = ax * by - ay * bx;
  return Math.atan2(Math.hypot(cx, cy, cz), ax * bx + ay * by + az * bz) * DEG_PER_RAD;
}

/** Places of every ensemble member at every time; index timeIndex * memberCount + member. */
export interface EnsemblePlaces {
  readonly timesUtc: readonly Date[];
  readonly memberCount: number;
  readonly raDeg: Float64Array;
  readonly decDeg: Float64Array;
  readonly raRateArcsecPerS: Float64Array;
  readonly decRateArcsecPerS: Float64Array;
  readonly deltaAu: Float64Array;
  readonly rAu: Float64Array;
  readonly phaseDeg: Float64Array;
  readonly elongationDeg: Float64Array;
}

/**
 * Light-time corrected astrometric places of many orbits (states at one epoch,
 * heliocentric EQJ) from one viewpoint at the given UTC instants: one
 * perturbed propagation for all members (propagateEnsemble), then one
 * observer geometry per instant shared by all members.
 */
export function ensemblePlaces(
  states: readonly HeliocentricState[],
  viewpoint: Viewpoint,
  timesUtc: readonly Date[],
  options: PropagationOptions = {},
): EnsemblePlaces {
  const timesTt = timesUtc.map((d, i) => {
    if (!(d instanceof Date) || !Number.isFinite(d.getTime())) throw new OrbitInputError(`timesUtc[${i}]`, d, 'expected a valid Date');
    return ttFromUtc(d);
  });
  const trajectory = propagateEnsemble(states, timesTt, options);
  return placesFromTrajectory(trajectory, viewpoint, timesUtc);
}

/** Astrometric places from an already propagated trajectory whose times are `timesUtc` (same order). */
export function placesFromTrajectory(trajectory: EnsembleTrajectory, viewpoint: Viewpoint, timesUtc: readonly Date[]): EnsemblePlaces {
  const n = trajectory.memberCount;
  const size = timesUtc.length * n;
  const out = {
    raDeg: new Float64Array(size),
    decDeg: new Float64Array(size),
    raRateArcsecPerS: new Float64Array(size),
    decRateArcsecPerS: new Float64Array(size),
    deltaAu: new Float64Array(size),
    rAu: new Float64Array(size),
    phaseDeg: new Float64Array(size),
    elongationDeg: new Float64Array(size),
  };
  const pos = trajectory.positionsAu;
  const vel = trajectory.velocitiesAuPerDay;
  timesUtc.forEach((timeUtc, k) => {
    const observer = observerGeometry(viewpoint, timeUtc);
    for (let m = 0; m < n; m++) {
      const j = k * n + m;
      const p = astrometricPlace(
        { x: pos[3 * j]!, y: pos[3 * j + 1]!, z: pos[3 * j + 2]! },
        { x: vel[3 * j]!, y: vel[3 * j + 1]!, z: vel[3 * j + 2]! },
        observer,
      );
      out.raDeg[j] = p.raDeg;
      out.decDeg[j] = p.decDeg;
      out.raRateArcsecPerS[j] = p.raRateArcsecPerS;
      out.decRateArcsecPerS[j] = p.decRateArcsecPerS;
      out.deltaAu[j] = p.deltaAu;
      out.rAu[j] = p.rAu;
      out.phaseDeg[j] = p.phaseDeg;
      out.elongationDeg[j] = p.elongationDeg;
    }
  });
  return { timesUtc, memberCount: n, ...out };
}

/** Positional uncertainty ellipse, 1-sigma arcsec, position angle deg east of north. */
export interface UncertaintyEllipse {
  readonly major: number;
  readonly minor: number;
  readonly pa: number;
}

/** One ephemeris row in edge units (degrees, arcsec/s, au, ISO UTC). */
export interface EphemerisRow {
  readonly t: string;
  readonly ra: number;
  readonly dec: number;
  readonly raRate: number;
  readonly decRate: number;
  readonly unc: UncertaintyEllipse | null;
  readonly mag: number | null;
  readonly magSigma: number | null;
  readonly delta: number;
  readonly r: number;
  readonly phase: number;
  readonly elong: number;
  readonly alt: number;
  readonly az: number;
  readonly airmass: number | null;
}

/** Absolute magnitude and slope of the IAU H-G system. */
export interface HgParameters {
  readonly hMag: number;
  /** Slope parameter; 0.15 when not known (Bowell et al. 1989's default). */
  readonly g?: number;
}

export const DEFAULT_SLOPE_G = 0.15;

/**
 * Ephemeris rows for one orbit (state at its epoch) from a site. Alt/az are
 * apparent with refraction (sky module); airmass by Kasten & Young (1989) when
 * the object is above the horizon, else null; V from H and G (IAU H-G, Bowell
 * et al. 1989) when H is known and the phase angle is within the model's range.
 */
export function ephemerisFromState(
  state: HeliocentricState,
  location: GeodeticLocation,
  timesUtc: readonly Date[],
  options: { photometry?: HgParameters; propagation?: PropagationOptions } = {},
): EphemerisRow[] {
  const places = ensemblePlaces([state], location, timesUtc, options.propagation ?? {});
  return rowsFromPlaces(places, 0, location, options.photometry);
}

/** Ephemeris rows for perihelion elements osculating at `epochTt` (TT days since J2000.0). */
export function ephemerisFromElements(
  elements: PerihelionElements,
  epochTt: number,
  location: GeodeticLocation,
  timesUtc: readonly Date[],
  options: { photometry?: HgParameters; propagation?: PropagationOptions } = {},
): EphemerisRow[] {
  requireFinite('epochTt', epochTt);
  return ephemerisFromState(stateFromPerihelionElements(elements, epochTt), location, timesUtc, options);
}

/** Builds edge-unit rows for one member of an ensemble. */
export function rowsFromPlaces(places: EnsemblePlaces, member: number, location: GeodeticLocation, photometry?: HgParameters): EphemerisRow[] {
  const n = places.memberCount;
  return places.timesUtc.map((timeUtc, k) => {
    const j = k * n + member;
    const ra = places.raDeg[j]!, dec = places.decDeg[j]!;
    const apparent = apparentInFrame(siteFrameAt(location, timeUtc), ra, dec, { refraction: true });
    const delta = places.deltaAu[j]!, r = places.rAu[j]!, phase = places.phaseDeg[j]!;
    return {
      t: timeUtc.toISOString(),
      ra,
      dec,
      raRate: places.raRateArcsecPerS[j]!,
      decRate: places.decRateArcsecPerS[j]!,
      unc: null,
      mag: photometry ? magnitudeOrNull(photometry, r, delta, phase) : null,
      magSigma: null,
      delta,
      r,
      phase,
      elong: places.elongationDeg[j]!,
      alt: apparent.altDeg,
      az: apparent.azDeg,
      airmass: apparent.altDeg > 0 ? airmassKastenYoung(Math.min(apparent.altDeg, 90)) : null,
    };
  });
}

function magnitudeOrNull(photometry: HgParameters, rAu: number, deltaAu: number, phaseDeg: number): number | null {
  try {
    return apparentMagnitudeHG(photometry.hMag, photometry.g ?? DEFAULT_SLOPE_G, rAu, deltaAu, phaseDeg);
  } catch (err) {
    // Beyond the phase range the H-G approximations are published for there is no magnitude to give.
    if (err instanceof PhotometryInputError && err.field.startsWith('phaseDeg')) return null;
    throw err;
  }
}
