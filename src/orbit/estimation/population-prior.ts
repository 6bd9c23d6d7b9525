import { DEFAULT_BAND_OFFSETS, MAX_PHASE_DEG, phaseTermHG } from '../../photometry/magnitudes.js';
import { GM_SUN_AU3_PER_DAY2, OBLIQUITY_J2000_RAD, RAD_PER_DEG } from '../constants.js';
import type { HeliocentricState } from '../elements.js';
import { EstimationInputError } from './errors.js';

/**
 * A population-informed prior for systematic ranging: the density of a
 * parametric model of the small-body population in the phase space of the
 * attributable's free coordinates (topocentric range rho and range-rate
 * rhoDot), given the tracklet's direction, motion and brightness.
 *
 * Derivation (checked in test/orbit/estimation/population-prior.test.ts):
 * - The attributable coordinates (alpha, delta, alphaDot, deltaDot, rho,
 *   rhoDot) (Milani et al. 2004, CMDA 90, 57) give the heliocentric state
 *   r = o + rho u(alpha, delta), v = oDot + rhoDot u + rho uDot. At fixed
 *   direction the position's volume element is rho^2 cos(delta) d rho
 *   d alpha d delta; at fixed position the velocity is linear in (rhoDot,
 *   alphaDot, deltaDot) with orthogonal columns u, rho du/dalpha (length
 *   rho cos delta), rho du/ddelta (length rho). So d^3r d^3v = rho^4
 *   cos^2(delta) d rho d rhoDot d alpha d delta d alphaDot d deltaDot
 *   (cos delta once when the RA rate is taken as alphaDot cos delta). With the
 *   four angular coordinates fixed by the tracklet, a population of
 *   phase-space density n(r, v) gives prior(rho, rhoDot) proportional to
 *   rho^4 n(r, v).
 * - Delaunay variables (l, g, h, L, G, H) = (mean anomaly, argument of
 *   perihelion, node, sqrt(mu a), L sqrt(1 - e^2), G cos i) are canonical, so
 *   d^3r d^3v = dl dg dh dL dG dH (unit Jacobian of a canonical
 *   transformation; e.g. Murray & Dermott 1999, Solar System Dynamics,
 *   sect. 2.10 for the variables, Goldstein, Classical Mechanics, ch. 9 for
 *   Liouville / canonical volume). The map (a, e, i) -> (L, G, H) is
 *   triangular with |Jacobian| = (mu^{3/2} / 2) sqrt(a) e sin i
 *   (delaunayJacobian). A population with density f(a, e, i) in elements and
 *   uniform angles therefore has
 *   n = f(a, e, i) / ((2 pi)^3 (mu^{3/2} / 2) sqrt(a) e sin i).
 * - Sizes: each component's differential H distribution is a power law
 *   dN/dH proportional to 10^(alpha H); H at a node comes from the tracklet's
 *   mean V and the node's geometry (H-G, G = 0.15, Bowell et al. 1989). The
 *   survey's detection probability depends on the observables (V, position,
 *   rate), which are the same for every node, so it cancels.
 *
 * Model (a parametric stand-in with published shapes, NOT a debiased model's
 * tables, which the project does not have; parameters from memory unless a
 * source is named):
 * - main belt: a box 2.1-3.3 au (between the 4:1 and 2:1 Jupiter resonances)
 *   with soft edges, e Rayleigh with sigma 0.12 (mean 0.15), perihelion
 *   beyond Mars' aphelion (q > 1.66 au, soft), inclination with a
 *   Fisher-type pole distribution, sigma 9 deg (mean 11 deg; the broad end
 *   of what memory gives, since the belt has a tail of high-inclination
 *   families a single Rayleigh shape misses); cumulative H
 *   slope 0.30 (faint main belt, e.g. Gladman et al. 2009, Icarus 202, 104).
 * - near-Earth objects (the general shape of Bottke et al. 2002, Icarus 156,
 *   399 and Granvik et al. 2018, Icarus 312, 181): a log-normal in a with
 *   median 1.9 au and width 0.35 in ln a, cut above 4.2 au; perihelion
 *   uniform between 0.1 and 1.3 au at fixed a (soft edges; few objects
 *   survive q < 0.1 au, Granvik et al. 2016, Nature 530, 303); inclination
 *   pole distribution sigma 14 deg (mean 17.5 deg, again the broad end); H slope 0.35 (Harris &
 *   D'Abramo 2015, Icarus 257, 302, H 17-25).
 * - floor: a dynamically hot population that gives every bound orbit weight:
 *   density 1/(a (1 + a/30 au)) from a = 0.25 au, thermal e (2e), isotropic
 *   poles (prograde and retrograde alike); H slope 0.35.
 * Weights (POPULATION_WEIGHTS) are the relative numbers per unit H at H = 18.
 * They are a choice for this service's input, not the sky's ratio (about a
 * thousand main-belt objects per near-Earth object at a given H): notices
 * are of objects the discoverers already flagged as near-Earth candidates,
 * whose motions the main belt rarely mimics, and the tool must never talk a
 * real close approacher away. So the two components get equal weight and
 * the floor 2 %.
 */

/** Relative numbers per unit H at H = POPULATION_H_REFERENCE (see the module comment for the choice). */
export const POPULATION_WEIGHTS = Object.freeze({ mainBelt: 0.49, nearEarth: 0.49, floor: 0.02 });
/** Cumulative (= differential) H-distribution slopes alpha, dN/dH proportional to 10^(alpha H). */
export const POPULATION_H_SLOPES = Object.freeze({ mainBelt: 0.3, nearEarth: 0.35, floor: 0.35 });
/** H at which POPULATION_WEIGHTS hold, mag. */
export const POPULATION_H_REFERENCE = 18;
/** Mean V taken when the tracklet has no usable magnitude (a typical survey detection); only the components' relative weights depend on it. */
export const DEFAULT_TRACKLET_V = 21;
/** H-G slope used for H at the nodes (the usual default). */
const SLOPE_G = 0.15;

export type PopulationComponentName = keyof typeof POPULATION_WEIGHTS;
export const POPULATION_COMPONENTS: readonly PopulationComponentName[] = ['mainBelt', 'nearEarth', 'floor'];

/** Osculating heliocentric elements used by the prior: a (au), e, inclination to the J2000 ecliptic (rad). */
export interface PriorElements {
  readonly aAu: number;
  readonly e: number;
  readonly iRad: number;
}

const logistic = (x: number): number => 1 / (1 + Math.exp(-x));

/**
 * |d(L, G, H) / d(a, e, i)| for the Delaunay momenta L = sqrt(mu a),
 * G = L sqrt(1 - e^2), H = G cos i: (mu^{3/2} / 2) sqrt(a) e sin i (the map
 * is triangular, so the determinant is dL/da dG/de dH/di). Units:
 * mu in au^3/day^2, a in au; result in (au^2/day)^3 per (au rad). Valid for
 * 0 <= e < 1, 0 <= i <= pi. Murray & Dermott 1999, sect. 2.10 (variables).
 */
export function delaunayJacobian(aAu: number, e: number, iRad: number, gm: number = GM_SUN_AU3_PER_DAY2): number {
  return (Math.pow(gm, 1.5) / 2) * Math.sqrt(aAu) * e * Math.sin(iRad);
}

/**
 * Fisher-type pole distribution on the sphere, exp(kappa cos i) with kappa =
 * 1/sigma^2, reduced: density in i divided by sin i (per rad). Normalised so
 * that kappa sin i exp(kappa (cos i - 1)) / (1 - exp(-2 kappa)) integrates to 1
 * over [0, pi]; Rayleigh with sigma at small i.
 */
function fisherReducedOf(sigmaRad: number): (iRad: number) => number {
  const kappa = 1 / (sigmaRad * sigmaRad);
  const scale = kappa / (1 - Math.exp(-2 * kappa));
  return (iRad) => scale * Math.exp(kappa * (Math.cos(iRad) - 1));
}

const MAIN_BELT = { aLo: 2.1, aHi: 3.3, aEdge: 0.03, sigmaE: 0.12, qMin: 1.66, qEdge: 0.03, sigmaIRad: 9 * RAD_PER_DEG } as const;
const NEAR_EARTH = { aMedian: 1.9, lnSigma: 0.35, aMax: 4.2, aEdge: 0.1, qLo: 0.1, qHi: 1.3, qEdge: 0.03, eSoft: 0.05, sigmaIRad: 14 * RAD_PER_DEG } as const;
const FLOOR = { aMin: 0.25, aEdge: 0.02, aTail: 30 } as const;

/** Unnormalised (a, e) shapes divided by e (finite at e = 0). */
const SHAPES: Readonly<Record<PopulationComponentName, (aAu: number, e: number) => number>> = {
  mainBelt: (a, e) => {
    const box = logistic((a - MAIN_BELT.aLo) / MAIN_BELT.aEdge) * logistic((MAIN_BELT.aHi - a) / MAIN_BELT.aEdge);
    const q = a * (1 - e);
    return (box * logistic((q - MAIN_BELT.qMin) / MAIN_BELT.qEdge) * Math.exp(-(e * e) / (2 * MAIN_BELT.sigmaE ** 2))) / MAIN_BELT.sigmaE ** 2;
  },
  nearEarth: (a, e) => {
    const z = Math.log(a / NEAR_EARTH.aMedian) / NEAR_EARTH.lnSigma;
    const inA = (Math.exp(-0.5 * z * z) / a) * logistic((NEAR_EARTH.aMax - a) / NEAR_EARTH.aEdge);
    const q = a * (1 - e);
    // Uniform in q at fixed a is a * (window in q) per unit e; e / sqrt(e^2 + e0^2) keeps the phase-space density finite at e = 0.
    const window = logistic((NEAR_EARTH.qHi - q) / NEAR_EARTH.qEdge) * logistic((q - NEAR_EARTH.qLo) / NEAR_EARTH.qEdge);
    return (inA * a * window) / Math.sqrt(e * e + NEAR_EARTH.eSoft ** 2);
  },
  floor: (a) => (2 * logistic((a - FLOOR.aMin) / FLOOR.aEdge)) / (a * (1 + a / FLOOR.aTail)),
};

/**
 * Normalisation of each (a, e) shape: midpoint rule over ln a (0.05-1e5 au,
 * 1200 cells) and e (0-1, 400 cells); the tests integrate the result on an
 * independent grid (to 2e-3).
 */
function normalisation(shape: (a: number, e: number) => number, cellsA = 1200, cellsE = 400): number {
  const lo = Math.log(0.05), hi = Math.log(1e5);
  const dl = (hi - lo) / cellsA, de = 1 / cellsE;
  let sum = 0;
  for (let j = 0; j < cellsA; j++) {
    const a = Math.exp(lo + (j + 0.5) * dl);
    for (let k = 0; k < cellsE; k++) {
      const e = (k + 0.5) * de;
      sum += shape(a, e) * e * a * dl * de;
    }
  }
  return sum;
}

const NORMS: Readonly<Record<PopulationComponentName, number>> = Object.freeze({
  mainBelt: normalisation(SHAPES.mainBelt),
  nearEarth: normalisation(SHAPES.nearEarth),
  floor: normalisation(SHAPES.floor),
});

const MAIN_BELT_POLES = fisherReducedOf(MAIN_BELT.sigmaIRad);
const NEAR_EARTH_POLES = fisherReducedOf(NEAR_EARTH.sigmaIRad);

/** Density in inclination divided by sin i, per rad, for a component. */
function inclinationReduced(name: PopulationComponentName, iRad: number): number {
  if (name === 'mainBelt') return MAIN_BELT_POLES(iRad);
  if (name === 'nearEarth') return NEAR_EARTH_POLES(iRad);
  return 0.5; // isotropic: sin(i) / 2
}

/**
 * A component's density in (a, e), normalised to 1 over a > 0, 0 <= e < 1;
 * per au per unit e. Each component's density in elements is this times its
 * inclination density (the two are independent in every component).
 */
export function semiMajorAxisEccentricityDensity(name: PopulationComponentName, aAu: number, e: number): number {
  checkElements({ aAu, e, iRad: 0 });
  return (SHAPES[name](aAu, e) * e) / NORMS[name];
}

/** A component's density in inclination to the ecliptic, normalised to 1 over [0, pi]; per rad. */
export function inclinationDensity(name: PopulationComponentName, iRad: number): number {
  checkElements({ aAu: 1, e: 0, iRad });
  return inclinationReduced(name, iRad) * Math.sin(iRad);
}

/**
 * A component's density in elements f(a, e, i), normalised to 1 over
 * a > 0, 0 <= e < 1, 0 <= i <= pi; per au per unit e per rad. The shapes
 * are those of the module comment.
 */
export function elementDensity(name: PopulationComponentName, el: PriorElements): number {
  checkElements(el);
  return ((SHAPES[name](el.aAu, el.e) * el.e) / NORMS[name]) * inclinationReduced(name, el.iRad) * Math.sin(el.iRad);
}

/**
 * A component's phase-space density per object, n = f(a, e, i) / ((2 pi)^3
 * (mu^{3/2} / 2) sqrt(a) e sin i), in (au^2/day)^-3 (per unit d^3r d^3v in au
 * and au/day); computed without the removable 0/0 at e = 0 or i = 0.
 */
export function phaseSpaceDensity(name: PopulationComponentName, el: PriorElements, gm: number = GM_SUN_AU3_PER_DAY2): number {
  checkElements(el);
  return phaseSpaceDensityUnchecked(name, el, gm);
}

function phaseSpaceDensityUnchecked(name: PopulationComponentName, el: PriorElements, gm: number): number {
  const reduced = (SHAPES[name](el.aAu, el.e) / NORMS[name]) * inclinationReduced(name, el.iRad);
  return reduced / ((2 * Math.PI) ** 3 * (Math.pow(gm, 1.5) / 2) * Math.sqrt(el.aAu));
}

/**
 * The mixture's phase-space density per unit H at absolute magnitude `hMag`:
 * sum over components of weight x 10^(alpha (H - 18)) x n. Relative units.
 */
export function populationDensity(el: PriorElements, hMag: number): number {
  if (!Number.isFinite(hMag)) throw new EstimationInputError('hMag', hMag, 'expected a finite absolute magnitude');
  checkElements(el);
  let sum = 0;
  for (const name of POPULATION_COMPONENTS) {
    sum += POPULATION_WEIGHTS[name] * Math.exp(Math.LN10 * POPULATION_H_SLOPES[name] * (hMag - POPULATION_H_REFERENCE)) * phaseSpaceDensityUnchecked(name, el, GM_SUN_AU3_PER_DAY2);
  }
  return sum;
}

function checkElements(el: PriorElements): void {
  if (!(Number.isFinite(el.aAu) && el.aAu > 0)) throw new EstimationInputError('aAu', el.aAu, 'expected a positive semi-major axis, au (bound orbit)');
  if (!(Number.isFinite(el.e) && el.e >= 0 && el.e < 1)) throw new EstimationInputError('e', el.e, 'expected an eccentricity from 0 to below 1 (bound orbit)');
  if (!(Number.isFinite(el.iRad) && el.iRad >= 0 && el.iRad <= Math.PI)) throw new EstimationInputError('iRad', el.iRad, 'expected an inclination from 0 to pi rad');
}

const COS_OBL = Math.cos(OBLIQUITY_J2000_RAD);
const SIN_OBL = Math.sin(OBLIQUITY_J2000_RAD);

/**
 * Osculating a (au), e and inclination to the J2000 ecliptic (rad) of a
 * heliocentric EQJ state (au, au/day), two-body with the Sun's GM; null when
 * the state is not bound to the Sun.
 */
export function priorElementsFromState(s: HeliocentricState, gm: number = GM_SUN_AU3_PER_DAY2): PriorElements | null {
  const r = Math.hypot(s.x, s.y, s.z);
  const v2 = s.vx * s.vx + s.vy * s.vy + s.vz * s.vz;
  const energy = v2 / 2 - gm / r;
  if (!(energy < 0)) return null;
  const hx = s.y * s.vz - s.z * s.vy, hy = s.z * s.vx - s.x * s.vz, hz = s.x * s.vy - s.y * s.vx;
  // Angular momentum in ecliptic axes: rotation about x by the obliquity.
  const hyE = COS_OBL * hy + SIN_OBL * hz, hzE = -SIN_OBL * hy + COS_OBL * hz;
  const h2 = hx * hx + hy * hy + hz * hz;
  const e = Math.sqrt(Math.max(0, 1 + (2 * energy * h2) / (gm * gm)));
  if (!(e < 1)) return null;
  return { aAu: -gm / (2 * energy), e, iRad: Math.atan2(Math.hypot(hx, hyE), hzE) };
}

/**
 * Mean V of a tracklet's magnitudes (bands reduced to V with photometry's
 * DEFAULT_BAND_OFFSETS, band null taken as V, bands without an offset left
 * out); null when none is usable.
 */
export function meanTrackletV(observations: readonly { readonly mag: number | null; readonly band: string | null }[]): number | null {
  let sum = 0, count = 0;
  for (const o of observations) {
    if (o.mag === null || !Number.isFinite(o.mag)) continue;
    const band = o.band ?? 'V';
    const offset = Object.prototype.hasOwnProperty.call(DEFAULT_BAND_OFFSETS, band) ? DEFAULT_BAND_OFFSETS[band] : undefined;
    if (offset === undefined) continue;
    sum += o.mag - offset;
    count++;
  }
  return count > 0 ? sum / count : null;
}

/**
 * Natural log of the population prior density in (rho, rhoDot) at a node,
 * up to a constant: ln[rho^4 x populationDensity(elements, H)], with H =
 * V - 5 log10(r Delta) - phase term (H-G, G = 0.15) from the tracklet's mean
 * V (DEFAULT_TRACKLET_V when null) and the node's geometry at the epoch:
 * r = |state| (au), Delta = |state - observer| (au), phase the Sun-object-
 * observer angle (capped at 179.9 deg). -Infinity for a state not bound to
 * the Sun. `observer` is the observer's heliocentric EQJ position, au;
 * `rangeAu` the node's topocentric range rho (au). Cost: one elements
 * conversion, three exponentials per component and one phase term (a few
 * microseconds per node).
 */
export function populationLogPrior(state: HeliocentricState, observer: { readonly x: number; readonly y: number; readonly z: number }, rangeAu: number, meanV: number | null): number {
  if (!(Number.isFinite(rangeAu) && rangeAu > 0)) throw new EstimationInputError('rangeAu', rangeAu, 'expected a positive topocentric range, au');
  if (meanV !== null && !Number.isFinite(meanV)) throw new EstimationInputError('meanV', meanV, 'expected a finite mean V magnitude or null');
  const el = priorElementsFromState(state);
  if (el === null) return -Infinity;
  const r = Math.hypot(state.x, state.y, state.z);
  const dx = state.x - observer.x, dy = state.y - observer.y, dz = state.z - observer.z;
  const delta = Math.hypot(dx, dy, dz);
  const cosPhase = (state.x * dx + state.y * dy + state.z * dz) / (r * delta);
  const phaseDeg = Math.min(Math.acos(Math.max(-1, Math.min(1, cosPhase))) / RAD_PER_DEG, MAX_PHASE_DEG);
  const hMag = (meanV ?? DEFAULT_TRACKLET_V) - 5 * Math.log10(r * delta) - phaseTermHG(SLOPE_G, phaseDeg);
  const density = populationDensity(el, hMag);
  return 4 * Math.log(rangeAu) + Math.log(density);
}
