import { heliocentricStateOf } from './kepler.js';
import { Trajectory } from './integrator.js';
import { altitudes, placeOf, type ReferencePlace, type ReferenceSite } from './observe.js';
import { magnitudeInBand, meanVMagnitude, type ReferenceColours } from './photometry.js';
import { referenceRandom, type ReferenceRandom } from './random.js';
import { ttDaysOfUtc } from './reference-time.js';
import { earthState, GM_SUN, KM_PER_AU, sunState } from './solar-system.js';

/**
 * Reference cases for the short-arc estimator: invented truths, integrated
 * by this folder's own dynamics (integrator.ts), observed from an invented
 * survey site as a tracklet with noise, and seen again from an invented
 * follow-up site on another continent and from the survey site at fixed
 * horizons. Nothing in this folder imports the project's code (a lint rule);
 * test/orbit/estimation/reference-scorer.ts runs the estimator on its cases.
 *
 * Populations, each scored separately:
 * - 'encounter': close approaches of random geometry: speed relative to the
 *   Earth far from it 3-25 km/s, closest distance 0.002-0.1 au log-uniform,
 *   closest approach 1-10 days after discovery (three cases in four) or
 *   0.5-3 days before it, directions isotropic, H 20-28;
 * - 'slow': the same with 1-5 km/s (Earth-like orbits, the most accessible targets);
 * - 'ordinary': main-belt orbits (a 2.1-3.3 au, e < 0.25, i < 20 deg, H 14-19)
 *   and near-Earth orbits seen from afar (a 1.1-2.6 au, q 0.9-1.3 au,
 *   i < 30 deg, more than 0.2 au away, H 17-22), half each.
 * Every truth is on a bound heliocentric orbit with a < 5 au. A case exists
 * when the survey could have observed it: Sun below -12 deg, object above
 * 20 deg and more than 45 deg from the Sun for the whole tracklet, mean V at
 * most 22 (the reach of a discovery survey, common practice).
 * Tracklets: 3-6 positions over 20-120 min, Gaussian noise of the stated
 * sigma, 0.2-1.0 arcsec per axis; magnitudes with the object's rotation
 * (double-peaked, 0-0.8 mag peak to peak, periods from 1.2 min to 20 h by size),
 * its colours and its phase law (G drawn about 0.20 +- 0.10), and 0.1-0.3 mag
 * of noise, rounded to 0.1 mag, in V, R, g or r.
 */

export type ReferencePopulation = 'encounter' | 'slow' | 'ordinary';
export const REFERENCE_POPULATIONS: readonly ReferencePopulation[] = ['encounter', 'slow', 'ordinary'];
export const REFERENCE_HORIZONS_H = [1, 3, 6, 12, 24, 48] as const;

/** Invented sites (no real observatory): a survey in the northern subtropics and a follow-up telescope in the southern hemisphere on another continent. */
export const REFERENCE_SURVEY_SITE: ReferenceSite = { name: 'survey (invented, 22.8 N 57.4 E)', latDeg: 22.8, lonDeg: 57.4, heightM: 1500 };
export const REFERENCE_FOLLOW_UP_SITE: ReferenceSite = { name: 'follow-up (invented, 26.4 S 133.8 E)', latDeg: -26.4, lonDeg: 133.8, heightM: 600 };

export interface ReferenceObservation {
  readonly t: string;
  readonly raDeg: number;
  readonly decDeg: number;
  readonly sigmaArcsec: number;
  readonly mag: number;
  readonly band: 'V' | 'R' | 'g' | 'r';
  readonly site: ReferenceSite;
}

export interface ReferenceTruthPoint {
  readonly site: 'followUp' | 'survey';
  readonly hours: number;
  readonly utcMs: number;
  readonly raDeg: number;
  readonly decDeg: number;
  /** Mean V (no rotation) at that time from that site. */
  readonly vMag: number;
}

export interface ReferenceCase {
  readonly id: string;
  readonly population: ReferencePopulation;
  readonly description: string;
  readonly hMag: number;
  readonly slopeG: number;
  /** Closest distance to the Earth's centre (au) and its time, for encounters. */
  readonly missAu: number | null;
  readonly observations: readonly ReferenceObservation[];
  readonly lastObservationMs: number;
  /** Mean of the observation times (ms) and the truth's topocentric distance from the survey site then, au. */
  readonly meanEpochMs: number;
  readonly meanEpochRangeAu: number;
  /** The truth's topocentric distance from the survey site at each observation time, au (to interpolate at any epoch inside the tracklet). */
  readonly observationRangesAu: readonly number[];
  readonly truth: readonly ReferenceTruthPoint[];
}

const DAY_MS = 86_400_000;
/** Truths are drawn between 2026-01-01 and 2027-06-20, inside the project's leap-second table (valid to 2027-06-28). */
const YEAR_START_MS = Date.UTC(2026, 0, 1);
const DRAW_SPAN_DAYS = 535;
const GM_EARTH_KM3_S2 = 398_600.4418;
const KM_S_TO_AU_DAY = 86_400 / KM_PER_AU;

type Vec3 = [number, number, number];
const add = (a: Vec3, b: Vec3): Vec3 => [a[0] + b[0], a[1] + b[1], a[2] + b[2]];
const scale = (a: Vec3, s: number): Vec3 => [a[0] * s, a[1] * s, a[2] * s];
const dot = (a: Vec3, b: Vec3): number => a[0] * b[0] + a[1] * b[1] + a[2] * b[2];

interface Truth {
  readonly epochTt: number;
  readonly state: Float64Array; // barycentric EQJ
  readonly searchStartMs: number;
  readonly hMag: number;
  readonly description: string;
  readonly missAu: number | null;
  readonly minDistanceAu: number; // ordinary: at least this far at discovery
}

/** Semi-major axis (au) and eccentricity of a heliocentric state. */
function conic(r: Vec3, v: Vec3): { a: number; e: number } {
  const rn = Math.hypot(...r);
  const energy = dot(v, v) / 2 - GM_SUN / rn;
  const h: Vec3 = [r[1] * v[2] - r[2] * v[1], r[2] * v[0] - r[0] * v[2], r[0] * v[1] - r[1] * v[0]];
  const e = Math.sqrt(Math.max(0, 1 + (2 * energy * dot(h, h)) / GM_SUN ** 2));
  return { a: energy < 0 ? -GM_SUN / (2 * energy) : Infinity, e };
}

function drawEncounter(random: ReferenceRandom, slow: boolean): Truth | null {
  const caMs = YEAR_START_MS + random.between(0, DRAW_SPAN_DAYS) * DAY_MS;
  const caTt = ttDaysOfUtc(caMs);
  const vInfKmS = slow ? random.between(1, 5) : random.between(3, 25);
  const missAu = 0.002 * Math.pow(50, random.uniform());
  const earth = earthState(caTt);
  const sun = sunState(caTt);
  const along = random.direction();
  let n = random.direction();
  n = add(n, scale(along, -dot(n, along)));
  n = scale(n, 1 / Math.hypot(...n));
  // Far from the Earth the heliocentric velocity is the Earth's plus v_inf: it must be a bound orbit.
  const farHelio = conic(add(earth.r, scale(sun.r, -1)), add(add(earth.v, scale(sun.v, -1)), scale(along, vInfKmS * KM_S_TO_AU_DAY)));
  if (!(farHelio.a > 0 && farHelio.a < 5 && farHelio.e < 1)) return null;
  // At closest approach: the periapsis of the geocentric hyperbola (speed from energy conservation).
  const missKm = missAu * KM_PER_AU;
  const periSpeed = Math.sqrt(vInfKmS ** 2 + (2 * GM_EARTH_KM3_S2) / missKm) * KM_S_TO_AU_DAY;
  const r = add(earth.r, scale(n, missAu));
  const v = add(earth.v, scale(along, periSpeed));
  const ahead = random.uniform() < 0.75;
  const leadDays = ahead ? random.between(1, 10) : -random.between(0.5, 3);
  return {
    epochTt: caTt,
    state: Float64Array.from([...r, ...v]),
    searchStartMs: caMs - leadDays * DAY_MS,
    hMag: random.between(20, 28),
    description: `${slow ? 'slow encounter' : 'encounter'}: ${missAu.toFixed(4)} au at ${vInfKmS.toFixed(1)} km/s, closest ${ahead ? `${leadDays.toFixed(1)} d after` : `${(-leadDays).toFixed(1)} d before`} the search start`,
    missAu,
    minDistanceAu: 0,
  };
}

function drawOrdinary(random: ReferenceRandom): Truth {
  const epochMs = YEAR_START_MS + random.between(0, DRAW_SPAN_DAYS) * DAY_MS;
  const epochTt = ttDaysOfUtc(epochMs);
  const mainBelt = random.uniform() < 0.5;
  const aAu = mainBelt ? random.between(2.1, 3.3) : random.between(1.1, 2.6);
  const e = mainBelt ? random.between(0, 0.25) : Math.max(0, 1 - random.between(0.9, 1.3) / aAu);
  const helio = heliocentricStateOf(
    { aAu, e, iDeg: random.between(0, mainBelt ? 20 : 30), nodeDeg: random.between(0, 360), periDeg: random.between(0, 360), meanAnomalyDeg: random.between(0, 360) },
    GM_SUN,
  );
  const sun = sunState(epochTt);
  const state = Float64Array.from([0, 1, 2, 3, 4, 5].map((k) => helio[k]! + (k < 3 ? sun.r[k]! : sun.v[k - 3]!)));
  return {
    epochTt,
    state,
    searchStartMs: epochMs,
    hMag: mainBelt ? random.between(14, 19) : random.between(17, 22),
    description: `${mainBelt ? 'main belt' : 'near-Earth orbit seen from afar'}: a ${aAu.toFixed(2)} au, e ${e.toFixed(2)}`,
    missAu: null,
    minDistanceAu: mainBelt ? 0 : 0.2,
  };
}

/** Straight-line guess of the geocentric direction's elongation, to skip truths near the Sun before integrating them. */
function roughlyVisible(truth: Truth): boolean {
  const tt = ttDaysOfUtc(truth.searchStartMs);
  const dt = tt - truth.epochTt;
  const r: Vec3 = [truth.state[0]! + truth.state[3]! * dt, truth.state[1]! + truth.state[4]! * dt, truth.state[2]! + truth.state[5]! * dt];
  const earth = earthState(tt).r, sun = sunState(tt).r;
  const toObject = add(r, scale(earth, -1)), toSun = add(sun, scale(earth, -1));
  const cos = dot(toObject, toSun) / (Math.hypot(...toObject) * Math.hypot(...toSun));
  return Math.acos(Math.max(-1, Math.min(1, cos))) > (35 * Math.PI) / 180;
}

/**
 * The truth behind a case seen from any site at any UTC instants (ms):
 * its astrometric places, light-time corrected, by this folder's own
 * integration (for benches that need more than the case's fixed horizons).
 */
export function referencePlacesFrom(population: ReferencePopulation, seed: number, site: ReferenceSite, utcMs: readonly number[]): ReferencePlace[] {
  const random = referenceRandom(seed * 104_729 + REFERENCE_POPULATIONS.indexOf(population) * 7_919 + 17);
  const truth = population === 'ordinary' ? drawOrdinary(random) : drawEncounter(random, population === 'slow');
  if (truth === null) throw new RangeError(`${population}-${seed}: no truth for this seed`);
  const trajectory = new Trajectory(truth.epochTt, truth.state);
  return utcMs.map((ms) => placeOf(trajectory, site, ms));
}

/**
 * The truth behind a case, for diagnostics: its heliocentric EQJ state (au,
 * au/day) at each TT given (the reference's Sun subtracted).
 */
export function referenceTruthStates(population: ReferencePopulation, seed: number, ttDays: readonly number[]): Float64Array[] {
  const random = referenceRandom(seed * 104_729 + REFERENCE_POPULATIONS.indexOf(population) * 7_919 + 17);
  const truth = population === 'ordinary' ? drawOrdinary(random) : drawEncounter(random, population === 'slow');
  if (truth === null) throw new RangeError(`${population}-${seed}: no truth for this seed`);
  const trajectory = new Trajectory(truth.epochTt, truth.state);
  return ttDays.map((tt) => {
    const s = trajectory.stateAt(tt);
    const sun = sunState(tt);
    return Float64Array.from([0, 1, 2, 3, 4, 5].map((k) => s[k]! - (k < 3 ? sun.r[k]! : sun.v[k - 3]!)));
  });
}

/** A reference case for `population` and `seed`, or null when its truth cannot be observed by the survey within 1.5 days (the caller tries the next seed). */
export function referenceCase(population: ReferencePopulation, seed: number): ReferenceCase | null {
  const random = referenceRandom(seed * 104_729 + REFERENCE_POPULATIONS.indexOf(population) * 7_919 + 17);
  const truth = population === 'ordinary' ? drawOrdinary(random) : drawEncounter(random, population === 'slow');
  if (truth === null || !roughlyVisible(truth)) return null;
  const slopeG = Math.min(0.55, Math.max(-0.05, 0.2 + 0.1 * random.normal()));
  const colours: ReferenceColours = { bMinusV: 0.8 + 0.06 * random.normal(), vMinusR: 0.43 + 0.05 * random.normal() };
  const amplitude = random.between(0, 0.8);
  const periodH = truth.hMag > 22 ? Math.exp(random.between(Math.log(0.02), Math.log(2))) : Math.exp(random.between(Math.log(2.2), Math.log(20)));
  const rotationPhase = random.between(0, 2 * Math.PI);
  const count = 3 + Math.floor(random.uniform() * 4);
  const arcMin = random.between(20, 120);
  const sigma = random.between(0.2, 1.0);
  const photSigma = random.between(0.1, 0.3);
  const trajectory = new Trajectory(truth.epochTt, truth.state);
  const survey = REFERENCE_SURVEY_SITE;
  const usable = (ms: number, place: ReferencePlace): boolean => {
    if (place.elongationDeg < 45 || place.deltaAu < truth.minDistanceAu) return false;
    if (meanVMagnitude(truth.hMag, slopeG, place.rAu, place.deltaAu, place.phaseDeg) > 22) return false;
    const alt = altitudes(survey, ms, place.raDeg, place.decDeg);
    return alt.objectDeg > 20 && alt.sunDeg < -12;
  };
  let firstMs: number | null = null;
  for (let k = 0; k < 1.5 * 144 && firstMs === null; k++) {
    const ms = truth.searchStartMs + k * 600_000;
    if (usable(ms, placeOf(trajectory, survey, ms)) && usable(ms + arcMin * 60_000, placeOf(trajectory, survey, ms + arcMin * 60_000))) firstMs = ms;
  }
  if (firstMs === null) return null;
  const start = firstMs;
  const times = Array.from({ length: count }, (_, k) => Math.round(start + (k * arcMin * 60_000) / (count - 1) + (k > 0 && k < count - 1 ? random.between(-60_000, 60_000) : 0)));
  const bands = ['V', 'V', 'V', 'r', 'r', 'r', 'R', 'g'] as const;
  const band = bands[Math.floor(random.uniform() * bands.length)]!;
  const observationRangesAu: number[] = [];
  const observations = times.map((ms): ReferenceObservation => {
    const place = placeOf(trajectory, survey, ms);
    observationRangesAu.push(place.deltaAu);
    // Noise in the tangent plane, per axis, then back to RA/Dec.
    const dEast = (random.normal() * sigma) / 206_264.806, dNorth = (random.normal() * sigma) / 206_264.806;
    const dec = (place.decDeg * Math.PI) / 180;
    const noisyDec = dec + dNorth;
    const noisyRa = (place.raDeg * Math.PI) / 180 + dEast / Math.cos(dec);
    const rotation = (amplitude / 2) * Math.sin((4 * Math.PI * (ms / 3_600_000)) / periodH + rotationPhase);
    const v = meanVMagnitude(truth.hMag, slopeG, place.rAu, place.deltaAu, place.phaseDeg) + rotation;
    const mag = Math.round((magnitudeInBand(v, band, colours) + photSigma * random.normal()) * 10) / 10;
    return {
      t: new Date(ms).toISOString(),
      raDeg: ((((noisyRa * 180) / Math.PI) % 360) + 360) % 360,
      decDeg: (noisyDec * 180) / Math.PI,
      sigmaArcsec: Math.round(sigma * 100) / 100,
      mag,
      band,
      site: survey,
    };
  });
  const lastMs = times[times.length - 1]!;
  const meanEpochMs = times.reduce((s, t) => s + t, 0) / times.length;
  const truthPoints: ReferenceTruthPoint[] = [];
  for (const [key, site] of [['followUp', REFERENCE_FOLLOW_UP_SITE], ['survey', survey]] as const) {
    for (const hours of REFERENCE_HORIZONS_H) {
      const ms = lastMs + hours * 3_600_000;
      const place = placeOf(trajectory, site, ms);
      truthPoints.push({ site: key, hours, utcMs: ms, raDeg: place.raDeg, decDeg: place.decDeg, vMag: meanVMagnitude(truth.hMag, slopeG, place.rAu, place.deltaAu, place.phaseDeg) });
    }
  }
  return {
    id: `${population}-${seed}`,
    population,
    description: `${truth.description}; H ${truth.hMag.toFixed(1)}, G ${slopeG.toFixed(2)}; ${count} positions over ${arcMin.toFixed(0)} min, sigma ${sigma.toFixed(2)}", ${band} band`,
    hMag: truth.hMag,
    slopeG,
    missAu: truth.missAu,
    observations,
    lastObservationMs: lastMs,
    meanEpochMs,
    meanEpochRangeAu: placeOf(trajectory, survey, meanEpochMs).deltaAu,
    observationRangesAu,
    truth: truthPoints,
  };
}

/** The first `count` cases of a population from `firstSeed` on (seeds that give no observable truth are skipped). */
export function referenceCases(population: ReferencePopulation, count: number, firstSeed = 1): ReferenceCase[] {
  const out: ReferenceCase[] = [];
  for (let seed = firstSeed; out.length < count && seed < firstSeed + 200 * count; seed++) {
    const c = referenceCase(population, seed);
    if (c) out.push(c);
  }
  return out;
}
