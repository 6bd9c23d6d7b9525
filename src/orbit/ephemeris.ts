import { Body, HelioState, MakeTime, ObserverState } from 'astronomy-engine';
import type { GeodeticLocation } from '../config/schema.js';
import { airmassKastenYoung, apparentInFrame, observerFromLocation, siteFrameAt } from '../sky/site.js';
import { apparentMagnitudeHG } from '../photometry/magnitudes.js';
import { PhotometryInputError } from '../photometry/errors.js';
import { ARCSEC_PER_RAD, DEG_PER_RAD, GM_SUN_AU3_PER_DAY2, LIGHT_AU_PER_DAY, SECONDS_PER_DAY } from './constants.js';
import { stateFromPerihelionElements, type HeliocentricState, type PerihelionElements } from './elements.js';
import { OrbitConvergenceError, OrbitInputError, requireFinite } from './errors.js';
import { EARTH_INDEX, PERTURBING_BODIES, PerturberTable } from './perturbers.js';
import { streamEnsemble, type EnsembleTrajectory, type PropagationOptions } from './propagate.js';
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
export function observerGeometry(viewpoint: Viewpoint, timeUtc: Date, perturbers?: PerturberTable): ObserverGeometry {
  if (!(timeUtc instanceof Date) || !Number.isFinite(timeUtc.getTime())) throw new OrbitInputError('timeUtc', timeUtc, 'expected a valid Date');
  const time = MakeTime(timeUtc);
  const { earth, ssb } = perturbers ? earthAndBarycentreFromTable(perturbers, time.tt) : { earth: HelioState(Body.Earth, time), ssb: HelioState(Body.SSB, time) };
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

/** Weights of the giant planets' heliocentric velocities in the barycentre's, gm / (gm + GM_sun) each, as astronomy-engine's own barycentre. */
const BARYCENTRE_WEIGHTS = PERTURBING_BODIES.map((p) =>
  p.body === Body.Jupiter || p.body === Body.Saturn || p.body === Body.Uranus || p.body === Body.Neptune ? p.gm / (p.gm + GM_SUN_AU3_PER_DAY2) : 0,
);

/**
 * The Earth's heliocentric state and the barycentre's velocity relative to the
 * Sun from a perturber table (Hermite between its astronomy-engine nodes):
 * the barycentre from the four giant planets as astronomy-engine forms it
 * (HelioState of Body.SSB). Measured against the direct series over 2027:
 * Earth within 2e-13 au and 4e-12 au/day. Saves two series evaluations per
 * instant where a propagation has the table anyway.
 */
function earthAndBarycentreFromTable(table: PerturberTable, tt: number): { earth: { x: number; y: number; z: number; vx: number; vy: number; vz: number }; ssb: { vx: number; vy: number; vz: number } } {
  const pos = new Float64Array(3 * PERTURBING_BODIES.length), vel = new Float64Array(3 * PERTURBING_BODIES.length);
  table.statesAt(tt, pos, vel);
  let vx = 0, vy = 0, vz = 0;
  BARYCENTRE_WEIGHTS.forEach((w, b) => {
    vx += w * vel[3 * b]!;
    vy += w * vel[3 * b + 1]!;
    vz += w * vel[3 * b + 2]!;
  });
  const e = 3 * EARTH_INDEX;
  return {
    earth: { x: pos[e]!, y: pos[e + 1]!, z: pos[e + 2]!, vx: vel[e]!, vy: vel[e + 1]!, vz: vel[e + 2]! },
    ssb: { vx, vy, vz },
  };
}

/** observerGeometry of every viewpoint at every instant: [viewpoint][time]; with the Earth from `perturbers` when given. */
export function observerGeometries(viewpoints: readonly Viewpoint[], timesUtc: readonly Date[], perturbers?: PerturberTable): ObserverGeometry[][] {
  return viewpoints.map((v) => timesUtc.map((t) => observerGeometry(v, t, perturbers)));
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
  // Checked without allocating (this runs per member and observation in the ranging); the message names the first bad field.
  if (!(Number.isFinite(r.x) && Number.isFinite(r.y) && Number.isFinite(r.z) && Number.isFinite(v.x) && Number.isFinite(v.y) && Number.isFinite(v.z))) {
    for (const [field, value] of [['r.x', r.x], ['r.y', r.y], ['r.z', r.z], ['v.x', v.x], ['v.y', v.y], ['v.z', v.z]] as const) requireFinite(field, value);
  }
  const out = new Float64Array(PLACE_FIELDS);
  placeInto(r.x, r.y, r.z, v.x, v.y, v.z, observer, out);
  return {
    raDeg: out[0]!,
    decDeg: out[1]!,
    raRateArcsecPerS: out[2]!,
    decRateArcsecPerS: out[3]!,
    deltaAu: out[4]!,
    rAu: out[5]!,
    phaseDeg: out[6]!,
    elongationDeg: out[7]!,
    lightTimeDays: out[8]!,
    lightTimeIterations: out[9]!,
  };
}

/** Number of values placeInto writes: ra, dec, raRate, decRate, delta, r, phase, elong, light time, iterations. */
const PLACE_FIELDS = 10;
const TO_ARCSEC_PER_S = ARCSEC_PER_RAD / SECONDS_PER_DAY;

/** The allocation-free core of astrometricPlace; writes PLACE_FIELDS numbers into `out` (same units). */
function placeInto(rx: number, ry: number, rz: number, vx: number, vy: number, vz: number, observer: ObserverGeometry, out: Float64Array): void {
  const o = observer.position;
  const rn = Math.sqrt(rx * rx + ry * ry + rz * rz);
  const kSun = GM_SUN_AU3_PER_DAY2 / (2 * rn * rn * rn);
  const sv = observer.sunBarycentricVelocity;
  let px = rx - o.x, py = ry - o.y, pz = rz - o.z;
  let tau = Math.sqrt(px * px + py * py + pz * pz) / LIGHT_AU_PER_DAY;
  let ex: number, ey: number, ez: number, rho: number;
  let iterations = 0;
  for (;;) {
    iterations++;
    const q = kSun * tau * tau;
    ex = rx - vx * tau - q * rx;
    ey = ry - vy * tau - q * ry;
    ez = rz - vz * tau - q * rz;
    px = ex - o.x - sv.x * tau;
    py = ey - o.y - sv.y * tau;
    pz = ez - o.z - sv.z * tau;
    rho = Math.sqrt(px * px + py * py + pz * pz);
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
  const vex = vx + ka * rx, vey = vy + ka * ry, vez = vz + ka * rz;
  const ux = px / rho, uy = py / rho, uz = pz / rho;
  const wx = vex - observer.velocity.x, wy = vey - observer.velocity.y, wz = vez - observer.velocity.z;
  const sx = vex + sv.x, sy = vey + sv.y, sz = vez + sv.z;
  const tauDot = (ux * wx + uy * wy + uz * wz) / LIGHT_AU_PER_DAY / (1 + (ux * sx + uy * sy + uz * sz) / LIGHT_AU_PER_DAY);
  const dx = wx - sx * tauDot, dy = wy - sy * tauDot, dz = wz - sz * tauDot;
  const rxy2 = px * px + py * py;
  const rxy = Math.sqrt(rxy2);
  // d(RA)/dt cos(Dec) = (x y' - y x') / (rxy rho); d(Dec)/dt = (z' rxy^2 - z (x x' + y y')) / (rho^2 rxy).
  const raDeg = Math.atan2(py, px) * DEG_PER_RAD;
  out[0] = raDeg < 0 ? raDeg + 360 : raDeg;
  out[1] = Math.atan2(pz, rxy) * DEG_PER_RAD;
  out[2] = ((px * dy - py * dx) / (rxy * rho)) * TO_ARCSEC_PER_S;
  out[3] = ((dz * rxy2 - pz * (px * dx + py * dy)) / (rho * rho * rxy)) * TO_ARCSEC_PER_S;
  out[4] = rho;
  out[5] = Math.sqrt(ex * ex + ey * ey + ez * ez);
  // Phase: angle at the object between the Sun (-e) and the observer (-rho).
  out[6] = angleDeg(ex, ey, ez, px, py, pz);
  // Elongation: angle at the observer between the Sun (-o) and the object (rho).
  out[7] = angleDeg(-o.x, -o.y, -o.z, px, py, pz);
  out[8] = tau;
  out[9] = iterations;
}

function angleDeg(ax: number, ay: number, az: number, bx: number, by: number, bz: number): number {
  const cx = ay * bz - az * by, cy = az * bx - ax * bz, cz = ax * by - ay * bx;
  return Math.atan2(Math.sqrt(cx * cx + cy * cy + cz * cz), ax * bx + ay * by + az * bz) * DEG_PER_RAD;
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

/** Places of all members at one time (arrays of length memberCount, reused between calls). */
export interface PlacesAtTime {
  readonly raDeg: Float64Array;
  readonly decDeg: Float64Array;
  readonly raRateArcsecPerS: Float64Array;
  readonly decRateArcsecPerS: Float64Array;
  readonly deltaAu: Float64Array;
  readonly rAu: Float64Array;
  readonly phaseDeg: Float64Array;
  readonly elongationDeg: Float64Array;
}

/** Zeroed arrays for every field of a place, each of `size` values. */
export function placeArrays(size: number): PlacesAtTime {
  return {
    raDeg: new Float64Array(size),
    decDeg: new Float64Array(size),
    raRateArcsecPerS: new Float64Array(size),
    decRateArcsecPerS: new Float64Array(size),
    deltaAu: new Float64Array(size),
    rAu: new Float64Array(size),
    phaseDeg: new Float64Array(size),
    elongationDeg: new Float64Array(size),
  };
}

function convertTimes(timesUtc: readonly Date[]): number[] {
  return timesUtc.map((d, i) => {
    if (!(d instanceof Date) || !Number.isFinite(d.getTime())) throw new OrbitInputError(`timesUtc[${i}]`, d, 'expected a valid Date');
    return ttFromUtc(d);
  });
}

/**
 * Light-time corrected astrometric places of many orbits, streamed: one
 * perturbed propagation for all members (streamEnsemble), one observer
 * geometry per instant, and `sink(timeIndex, places)` per requested instant
 * with arrays reused between calls (copy what must outlive the call). Order of
 * calls: as streamEnsemble. Memory stays at a few arrays of members.
 */
export function streamEnsemblePlaces(
  states: readonly HeliocentricState[],
  viewpoint: Viewpoint,
  timesUtc: readonly Date[],
  sink: (timeIndex: number, places: PlacesAtTime) => void,
  options: PropagationOptions = {},
): { stepCount: number; perturberNodeCount: number } {
  return streamEnsemblePlacesForSites(states, [viewpoint], timesUtc, (k, _site, places) => sink(k, places), options);
}

/**
 * As streamEnsemblePlaces for several viewpoints from one propagation:
 * `sink(timeIndex, viewpointIndex, places)` for every viewpoint at every
 * requested instant (the propagation, the dominant cost, is not repeated).
 * `observers[v][k]`, when given, is the geometry of viewpoint v at timesUtc[k]
 * (observerGeometries), for callers that place several ensembles at the same times.
 */
export function streamEnsemblePlacesForSites(
  states: readonly HeliocentricState[],
  viewpoints: readonly Viewpoint[],
  timesUtc: readonly Date[],
  sink: (timeIndex: number, viewpointIndex: number, places: PlacesAtTime) => void,
  options: PropagationOptions = {},
  observers?: readonly (readonly ObserverGeometry[])[],
): { stepCount: number; perturberNodeCount: number } {
  if (viewpoints.length === 0) throw new OrbitInputError('viewpoints', '[]', 'expected at least one site or the geocentre');
  const timesTt = convertTimes(timesUtc);
  const n = states.length;
  const places: PlacesAtTime = placeArrays(n);
  const scratch = new Float64Array(PLACE_FIELDS);
  return streamEnsemble(
    states,
    timesTt,
    (k, pos, vel) => {
      viewpoints.forEach((viewpoint, v) => {
        const observer = observers?.[v]?.[k] ?? observerGeometry(viewpoint, timesUtc[k]!);
        for (let m = 0; m < n; m++) {
          placeInto(pos[3 * m]!, pos[3 * m + 1]!, pos[3 * m + 2]!, vel[3 * m]!, vel[3 * m + 1]!, vel[3 * m + 2]!, observer, scratch);
          places.raDeg[m] = scratch[0]!;
          places.decDeg[m] = scratch[1]!;
          places.raRateArcsecPerS[m] = scratch[2]!;
          places.decRateArcsecPerS[m] = scratch[3]!;
          places.deltaAu[m] = scratch[4]!;
          places.rAu[m] = scratch[5]!;
          places.phaseDeg[m] = scratch[6]!;
          places.elongationDeg[m] = scratch[7]!;
        }
        sink(k, v, places);
      });
    },
    options,
  );
}

/**
 * Light-time corrected astrometric places of many orbits (states at one epoch,
 * heliocentric EQJ) from one viewpoint at the given UTC instants, collected
 * into arrays indexed timeIndex * memberCount + member (streamEnsemblePlaces).
 */
export function ensemblePlaces(
  states: readonly HeliocentricState[],
  viewpoint: Viewpoint,
  timesUtc: readonly Date[],
  options: PropagationOptions = {},
): EnsemblePlaces {
  return ensemblePlacesForSites(states, [viewpoint], timesUtc, options)[0]!;
}

/** ensemblePlaces for several viewpoints from one propagation (one EnsemblePlaces per viewpoint, same order). */
export function ensemblePlacesForSites(
  states: readonly HeliocentricState[],
  viewpoints: readonly Viewpoint[],
  timesUtc: readonly Date[],
  options: PropagationOptions = {},
): EnsemblePlaces[] {
  const n = states.length;
  const size = timesUtc.length * n;
  const outs = viewpoints.map(() => placeArrays(size));
  streamEnsemblePlacesForSites(
    states,
    viewpoints,
    timesUtc,
    (k, v, p) => {
      const out = outs[v]!;
      for (const key of Object.keys(out) as (keyof PlacesAtTime)[]) out[key].set(p[key], k * n);
    },
    options,
  );
  return outs.map((out) => ({ timesUtc, memberCount: n, ...out }));
}

/** Astrometric places from an already propagated trajectory whose times are `timesUtc` (same order). */
export function placesFromTrajectory(trajectory: EnsembleTrajectory, viewpoint: Viewpoint, timesUtc: readonly Date[]): EnsemblePlaces {
  const n = trajectory.memberCount;
  const size = timesUtc.length * n;
  const out = placeArrays(size);
  const pos = trajectory.positionsAu;
  const vel = trajectory.velocitiesAuPerDay;
  const scratch = new Float64Array(PLACE_FIELDS);
  timesUtc.forEach((timeUtc, k) => {
    const observer = observerGeometry(viewpoint, timeUtc);
    for (let m = 0; m < n; m++) {
      const j = k * n + m;
      placeInto(pos[3 * j]!, pos[3 * j + 1]!, pos[3 * j + 2]!, vel[3 * j]!, vel[3 * j + 1]!, vel[3 * j + 2]!, observer, scratch);
      out.raDeg[j] = scratch[0]!;
      out.decDeg[j] = scratch[1]!;
      out.raRateArcsecPerS[j] = scratch[2]!;
      out.decRateArcsecPerS[j] = scratch[3]!;
      out.deltaAu[j] = scratch[4]!;
      out.rAu[j] = scratch[5]!;
      out.phaseDeg[j] = scratch[6]!;
      out.elongationDeg[j] = scratch[7]!;
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
