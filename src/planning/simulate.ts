import type { GeodeticLocation } from '../config/schema.js';
import { ephemerisFromState, observerGeometry } from '../orbit/ephemeris.js';
import { perihelionElementsFromState, type HeliocentricState } from '../orbit/elements.js';
import { ttFromUtc, ttIsoFromTt } from '../orbit/time.js';
import { PlanningInputError, requireDate, requireFinite } from './errors.js';

/**
 * A night of invented discovery notices (format nightjar.notice.v1) for the
 * demo: invented objects placed in the sky relative to the clock, propagated
 * with the project's own orbit module, observed from an invented survey station
 * before `now`. Pure: the seed and the clock in, notices out.
 */

export const SIMULATED_SENDER = 'Harrow Fell Sky Survey (invented demo sender)';
/** Invented survey stations: the northern one observes most objects, the southern one the far-south ones. */
export const SURVEY_NORTH: GeodeticLocation = Object.freeze({ latDeg: 32.87, lonDeg: -105.48, heightM: 2790 });
export const SURVEY_SOUTH: GeodeticLocation = Object.freeze({ latDeg: -30.24, lonDeg: -70.74, heightM: 2650 });

const KM_PER_AU = 149_597_870.7;
const AU_PER_DAY_PER_KM_PER_S = 86_400 / KM_PER_AU;
const RAD = Math.PI / 180;

/** What each invented object is meant to show in the demo. */
export type SimulatedKind = 'ordinary' | 'close-approacher' | 'too-faint' | 'too-far-south' | 'fast-flyby';
export const SIMULATED_KINDS: readonly SimulatedKind[] = ['close-approacher', 'ordinary', 'too-faint', 'ordinary', 'too-far-south', 'close-approacher', 'fast-flyby'];

export interface InventStateInput {
  timeUtc: Date;
  /** Geocentric direction, deg (ICRS), and distance, au. */
  raDeg: number;
  decDeg: number;
  distanceAu: number;
  /** Velocity relative to the Earth, km/s: along the line of sight (positive receding) and across it, at a position angle east of north. */
  radialKmPerS: number;
  transverseKmPerS: number;
  motionPaDeg: number;
}

/**
 * A heliocentric EQJ state (au, au/day) that puts an object at a chosen
 * geocentric direction and distance at `timeUtc` with a chosen velocity
 * relative to the Earth: Earth's heliocentric state (astronomy-engine via the
 * orbit module) plus the offset. Geometry only (Meeus ch. 33's vector sum of
 * Earth and object positions, read backwards); light time is not applied.
 */
export function inventState(input: InventStateInput): HeliocentricState {
  requireDate('timeUtc', input.timeUtc);
  requireFinite('raDeg', input.raDeg);
  requireFinite('decDeg', input.decDeg, -90, 90);
  requireFinite('distanceAu', input.distanceAu, 1e-6);
  requireFinite('radialKmPerS', input.radialKmPerS);
  requireFinite('transverseKmPerS', input.transverseKmPerS);
  requireFinite('motionPaDeg', input.motionPaDeg);
  const earth = observerGeometry('geocentre', input.timeUtc);
  const ra = input.raDeg * RAD;
  const dec = input.decDeg * RAD;
  const u = { x: Math.cos(dec) * Math.cos(ra), y: Math.cos(dec) * Math.sin(ra), z: Math.sin(dec) };
  const east = { x: -Math.sin(ra), y: Math.cos(ra), z: 0 };
  const north = { x: -Math.sin(dec) * Math.cos(ra), y: -Math.sin(dec) * Math.sin(ra), z: Math.cos(dec) };
  const pa = input.motionPaDeg * RAD;
  const vr = input.radialKmPerS * AU_PER_DAY_PER_KM_PER_S;
  const vt = input.transverseKmPerS * AU_PER_DAY_PER_KM_PER_S;
  const d = input.distanceAu;
  const vel = (k: 'x' | 'y' | 'z') => vr * u[k] + vt * (Math.sin(pa) * east[k] + Math.cos(pa) * north[k]);
  return {
    tt: earth.tt,
    x: earth.position.x + d * u.x,
    y: earth.position.y + d * u.y,
    z: earth.position.z + d * u.z,
    vx: earth.velocity.x + vel('x'),
    vy: earth.velocity.y + vel('y'),
    vz: earth.velocity.z + vel('z'),
  };
}

/** Mulberry32, a small seeded generator (public-domain; deterministic across platforms). */
export function seededRandom(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Standard normal deviate by Box-Muller. */
function gaussian(random: () => number): number {
  const u = Math.max(random(), 1e-12);
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * random());
}

export interface SimulatedNotice {
  kind: SimulatedKind;
  /** The notice as JSON-ready data (nightjar.notice.v1). */
  notice: Record<string, unknown>;
}

export interface SimulateInput {
  now: Date;
  /** Number of notices, 1..200. */
  count: number;
  seed: number;
  /**
   * Include the orbit block (elements osculating at `now`, H, G). Default false: survey notices
   * of new objects carry a tracklet, and the estimator then works from the astrometry alone.
   */
  withOrbit?: boolean;
}

const LETTERS = 'ABCDEFGHJKLMNOPQRSTUVWXYZ';
const round = (x: number, digits: number) => Number(x.toFixed(digits));

interface Placement {
  raOffsetDeg: number;
  decDeg: number;
  distanceAu: number;
  hMag: number;
  radialKmPerS: number;
  transverseKmPerS: number;
  observer: GeodeticLocation;
}

function placementFor(kind: SimulatedKind, random: () => number): Placement {
  const between = (lo: number, hi: number) => lo + (hi - lo) * random();
  const sign = random() < 0.5 ? -1 : 1;
  switch (kind) {
    case 'ordinary':
      return { raOffsetDeg: between(-35, 35), decDeg: between(5, 45), distanceAu: between(0.08, 0.3), hMag: between(19, 21.5), radialKmPerS: sign * between(2, 8), transverseKmPerS: between(4, 12), observer: SURVEY_NORTH };
    case 'close-approacher':
      return { raOffsetDeg: between(-30, 30), decDeg: between(10, 50), distanceAu: between(0.004, 0.015), hMag: between(24.5, 27), radialKmPerS: -between(2, 6), transverseKmPerS: between(5, 12), observer: SURVEY_NORTH };
    case 'too-faint':
      return { raOffsetDeg: between(-30, 30), decDeg: between(5, 40), distanceAu: between(0.6, 0.9), hMag: between(23, 24), radialKmPerS: sign * between(2, 8), transverseKmPerS: between(3, 8), observer: SURVEY_NORTH };
    case 'too-far-south':
      return { raOffsetDeg: between(-30, 30), decDeg: between(-78, -62), distanceAu: between(0.05, 0.2), hMag: between(20, 22), radialKmPerS: sign * between(2, 8), transverseKmPerS: between(4, 10), observer: SURVEY_SOUTH };
    case 'fast-flyby':
      return { raOffsetDeg: between(-25, 25), decDeg: between(10, 40), distanceAu: between(0.00025, 0.00035), hMag: between(30, 31), radialKmPerS: -between(1, 3), transverseKmPerS: between(22, 28), observer: SURVEY_NORTH };
  }
}

/**
 * Invents `count` notices. Each object is placed relative to the anti-solar
 * point at `now` (so most are up at night from northern sites), propagated by
 * the orbit module, and observed 4 to 6 times from a survey station, 15 min
 * apart, the last 20 to 80 min before `now`, with 0.3 arcsec Gaussian
 * astrometric noise and 0.1 mag photometric noise. With `withOrbit` the notice
 * also carries the orbit block (elements osculating at `now`, H and G 0.15).
 */
export function simulateNight(input: SimulateInput): SimulatedNotice[] {
  requireDate('now', input.now);
  requireFinite('count', input.count, 1, 200);
  requireFinite('seed', input.seed);
  if (!Number.isInteger(input.count)) throw new PlanningInputError('count', input.count, 'expected a whole number');
  const random = seededRandom(Math.floor(input.seed));
  const nowMs = input.now.getTime();
  const earth = observerGeometry('geocentre', input.now).position;
  const antiSolarRaDeg = ((Math.atan2(earth.y, earth.x) / RAD) + 360) % 360;
  const year = String(input.now.getUTCFullYear() % 100).padStart(2, '0');
  const halfMonth = LETTERS[(input.now.getUTCMonth() * 2 + (input.now.getUTCDate() > 15 ? 1 : 0)) % LETTERS.length]!;
  const used = new Set<string>();
  const out: SimulatedNotice[] = [];
  for (let k = 0; k < input.count; k++) {
    const kind = SIMULATED_KINDS[k % SIMULATED_KINDS.length]!;
    const p = placementFor(kind, random);
    let objectId: string;
    do {
      objectId = `HF${year}${halfMonth}${Math.floor(random() * 36 ** 3).toString(36).toUpperCase().padStart(3, '0')}`;
    } while (used.has(objectId));
    used.add(objectId);
    const state = inventState({
      timeUtc: input.now,
      raDeg: (antiSolarRaDeg + p.raOffsetDeg + 360) % 360,
      decDeg: p.decDeg,
      distanceAu: p.distanceAu,
      radialKmPerS: p.radialKmPerS,
      transverseKmPerS: p.transverseKmPerS,
      motionPaDeg: random() * 360,
    });
    const nObs = 4 + Math.floor(random() * 3);
    const lastMs = nowMs - Math.round((20 + random() * 60) * 60_000);
    const times = Array.from({ length: nObs }, (_, i) => new Date(lastMs - (nObs - 1 - i) * 15 * 60_000));
    const rows = ephemerisFromState(state, p.observer, times, { photometry: { hMag: p.hMag, g: 0.15 } });
    const sigmaArcsec = 0.3;
    const observations = rows.map((row) => {
      const dec = row.dec + (sigmaArcsec * gaussian(random)) / 3600;
      const ra = (row.ra + (sigmaArcsec * gaussian(random)) / 3600 / Math.cos(row.dec * RAD) + 360) % 360;
      const obs: Record<string, unknown> = { t: row.t, ra: round(ra, 6), dec: round(dec, 6), sigma: sigmaArcsec };
      if (row.mag !== null) {
        obs['mag'] = round(Math.min(35, row.mag + 0.1 * gaussian(random)), 2);
        obs['band'] = 'V';
      }
      return obs;
    });
    const el = perihelionElementsFromState(state);
    const wrap = (deg: number) => round(((deg % 360) + 360) % 360, 12) % 360;
    const orbit = {
      epoch: `${ttIsoFromTt(ttFromUtc(input.now))}Z`,
      // Digits enough that the rounding moves a flyby at 0.0003 au by under 0.01 arcsec.
      q: round(el.qAu, 14),
      e: round(el.e, 14),
      i: round(el.iDeg, 12),
      node: wrap(el.nodeDeg),
      peri: wrap(el.periDeg),
      tp: `${ttIsoFromTt(el.tpTt)}Z`,
      H: round(p.hMag, 2),
      G: 0.15,
    };
    const notice = {
      format: 'nightjar.notice.v1',
      noticeId: `hfs-sim-${input.now.toISOString().slice(0, 10)}-${Math.floor(input.seed)}-${String(k + 1).padStart(3, '0')}`,
      objectId,
      issuedAt: new Date(lastMs + 5 * 60_000).toISOString(),
      sender: SIMULATED_SENDER,
      observer: { lat: p.observer.latDeg, lon: p.observer.lonDeg, height: p.observer.heightM },
      observations,
      ...(input.withOrbit === true ? { orbit } : {}),
    };
    out.push({ kind, notice });
  }
  return out;
}
