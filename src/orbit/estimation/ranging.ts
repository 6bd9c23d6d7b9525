import { Body, HelioState, MakeTime } from 'astronomy-engine';
import { ARCSEC_PER_RAD, KM_PER_AU, GM_EARTH_AU3_PER_DAY2, GM_MOON_AU3_PER_DAY2, GM_SUN_AU3_PER_DAY2, LIGHT_AU_PER_DAY, SECONDS_PER_DAY } from '../constants.js';
import type { HeliocentricState } from '../elements.js';
import { astrometricPlace, observerGeometry, type ObserverGeometry } from '../ephemeris.js';
import { PerturberTable } from '../perturbers.js';
import { streamEnsemble } from '../propagate.js';
import { ttFromUtc } from '../time.js';
import type { Attributable } from './attributable.js';
import { OrbitConvergenceError } from '../errors.js';
import { EstimationFailedError, EstimationInputError } from './errors.js';
import { cholesky, invert } from './linalg.js';
import type { PreparedObservation } from './observations.js';
import { meanTrackletV, populationLogPrior } from './population-prior.js';
import { systematicResample, weightedQuantile } from '../../stats/index.js';
import type { RandomSource } from './random.js';
import { project, unitFromRaDec, unproject, type Vec3 } from './tangent.js';

/**
 * Systematic ranging over topocentric range and range-rate (Chesley 2005,
 * Proc. IAU Symposium 229, 215; Farnocchia, Chesley & Micheli 2015, Icarus
 * 258, 18), sampled into virtual orbits as in statistical ranging (Virtanen,
 * Muinonen & Bowell 2001, Icarus 154, 412).
 *
 * Grid: range rho (au) log-spaced from RANGE_MIN_AU to RANGE_MAX_AU; for each
 * range, range-rate (au/day) uniform over the interval where the orbit is
 * bound to the Sun (the admissible region of Milani et al. 2004, CMDA 90, 57),
 * with orbits bound to the Earth left out. At each node the four angular
 * parameters (direction and rate at the tracklet's mean epoch) are adjusted by
 * Gauss-Newton least squares against every used observation, each from its
 * own observer position, with the project's perturbed propagation and
 * light-time corrected places; the Jacobian is the attributable's design
 * matrix (exact for the direction offsets, accurate to the arc's curvature for
 * the rates), three evaluations per node. Likelihood exp(-chi^2/2).
 *
 * Prior (documented in docs/accuracy.md), one of two: 'population', the
 * phase-space density of a parametric small-body population times rho^4
 * (population-prior.ts); or 'powerLaw', density proportional to rho^k, flat
 * in range-rate inside the admissible region, k = DEFAULT_RANGE_PRIOR_EXPONENT
 * (0.5) unless given. DEFAULT_RANGE_PRIOR chooses when the options do not
 * (the power law for a two-position tracklet).
 * Grid refinement: while the posterior weight is
 * concentrated (99.9 % inside less than half the current span of log range,
 * or fewer than 40 nodes effectively carrying it), a new grid covers that
 * span of log range (each row again over its whole admissible range-rate
 * interval, then profiled); at most five passes.
 */

/**
 * Default exponent k of the range prior rho^k: 0.5. Reasoning (population,
 * from memory): for a magnitude-limited search near the Earth (r about 1 au,
 * Delta about rho) the objects brighter than the limit at range rho number
 * rho^2 (shell volume) times 10^(alpha H_lim) with H_lim = V_lim - 5 log10(rho),
 * i.e. rho^(2 - 5 alpha); cumulative H slopes alpha of 0.3-0.4 (NEOs and main
 * belt at the sizes surveys find, e.g. Harris & D'Abramo 2015, Icarus 257, 302)
 * give k from 0.5 to 0. Of k = -1 (flat in log range), -0.5, 0 and 0.5 the
 * calibration generator favours 0.5 (docs/accuracy.md), so that end is used.
 */
export const DEFAULT_RANGE_PRIOR_EXPONENT = 0.5;

/**
 * The range priors ranging offers: the default 'mixture' of the population
 * model and the model of close encounters of any orbit (encounterDensity),
 * added with weight MIXTURE_ENCOUNTER_LOG_WEIGHT; either alone ('population',
 * 'encounter'); or rho^k ('powerLaw').
 */
export type RangePriorKind = 'mixture' | 'population' | 'encounter' | 'powerLaw';

/**
 * Prior used when the options name none (and give no exponent), for any
 * number of positions: chosen by measurement on the reference generator
 * (docs/accuracy.md). A two-position tracklet measures no range at all, so
 * its posterior is this prior; the mixture keeps close encounters possible
 * there too.
 */
export const DEFAULT_RANGE_PRIOR: RangePriorKind = 'mixture';

/**
 * ln of the weight of the encounter component against the population model in
 * the default mixture; the two densities are added as they are, not each
 * normalised per tracklet (docs/accuracy.md says why). Chosen on the reference
 * generator's close-approach populations and then frozen; checked on fresh
 * cases of all three populations (docs/accuracy.md).
 */
export const MIXTURE_ENCOUNTER_LOG_WEIGHT = -5;

/** Smallest range on the grid, au (45 000 km, about a ninth of the Moon's distance). */
export const RANGE_MIN_AU = 3e-4;
/** Largest range on the grid, au (beyond the outer main belt seen from the Earth). */
export const RANGE_MAX_AU = 6;

export interface RangingOptions {
  /** Which range prior; default DEFAULT_RANGE_PRIOR, or 'powerLaw' when only rangePriorExponent is given. */
  readonly rangePrior?: RangePriorKind;
  /** Exponent k of the power-law range prior rho^k; default DEFAULT_RANGE_PRIOR_EXPONENT (0.5). */
  readonly rangePriorExponent?: number;
  /** ln of the encounter component's weight against the population model in the 'mixture' prior; default MIXTURE_ENCOUNTER_LOG_WEIGHT. */
  readonly mixtureEncounterLogWeight?: number;
  /** The encounter component's window on the time to the closest approach, days either side; default ENCOUNTER_WINDOW_DAYS. */
  readonly encounterWindowDays?: number;
  /** Proposals for the sampling inside the cells; default PROPOSALS_PER_MEMBER per virtual orbit, never fewer. A small ensemble drawn from as many proposals as a large one samples the posterior's tails as well. */
  readonly proposals?: number;
  readonly rangeNodes?: number;
  readonly rateNodes?: number;
  readonly passes?: number;
  /** Gauss-Newton evaluations per node; default 3. */
  readonly evaluations?: number;
}

/** One grid node after its fit. */
export interface RangingNode {
  readonly rangeAu: number;
  readonly rangeRateAuPerDay: number;
  /** Width of the node's cell in ln(range) and in range-rate (au/day). */
  readonly logRangeWidth: number;
  readonly rateWidth: number;
  /** Fitted (xi0, eta0, xiDot, etaDot) in the attributable's frame, rad and rad/day. */
  readonly params: readonly number[];
  readonly chiSquare: number;
  /** The encounter component's share of the prior's mass in the node's cell (0 without that component). */
  readonly encounterShare: number;
  /** Normalised posterior weight (sums to 1 over the pass). */
  weight: number;
}

/** The virtual orbits drawn from the ranging posterior, with the importance sampling's effective sample size, its proposals and rounds (2 when a second round was drawn around the heaviest proposals). */
export interface SampledOrbits {
  readonly members: VirtualOrbit[];
  readonly effectiveSampleSize: number;
  readonly proposals: number;
  readonly rounds: 1 | 2;
}

export interface RangingResult {
  readonly epochTt: number;
  readonly nodes: readonly RangingNode[];
  readonly passes: number;
  readonly minChiSquare: number;
  readonly evaluatedNodes: number;
  /** The range prior used, and its exponent when it is the power law. */
  readonly prior: RangePriorKind;
  readonly priorExponent: number | null;
  readonly mixtureEncounterLogWeight: number | null;
  /** Builds the heliocentric state (EQJ, au, au/day, at epochTt) of a node's parameters. */
  readonly stateOf: (params: readonly number[], rangeAu: number, rangeRateAuPerDay: number) => HeliocentricState;
  /**
   * Draws `count` virtual orbits continuously from the posterior (importance
   * sampling inside the cells, sampleInsideCells), with the attributable's
   * angle covariance; reports the proposals' effective sample size.
   */
  readonly sample: (covariance: readonly (readonly number[])[], count: number, random: RandomSource) => SampledOrbits;
}

/** A virtual orbit drawn from the ranging posterior. */
export interface VirtualOrbit {
  readonly state: HeliocentricState;
  readonly rangeAu: number;
  readonly rangeRateAuPerDay: number;
  /** The angles fitted at this member's (range, range-rate), before the angle noise: (xi0, eta0, xiDot, etaDot), rad and rad/day. */
  readonly fittedParams: readonly number[];
}

interface Context {
  readonly observations: readonly PreparedObservation[];
  readonly geometries: readonly ObserverGeometry[];
  readonly timesTt: readonly number[];
  readonly dtDays: readonly number[];
  readonly weights: readonly number[];
  readonly observedXi: readonly number[];
  readonly observedEta: readonly number[];
  readonly attributable: Attributable;
  readonly reference: ObserverGeometry;
  readonly earth: { r: Vec3; v: Vec3 };
  readonly epochTt: number;
  /** 2 x 2 inverse normal matrix of the linear model (same for both axes). */
  readonly normalInverse: readonly [number, number, number];
  /** Mean V of the used positions (null when none has a usable magnitude), for the population prior. */
  readonly meanV: number | null;
  /** Perturber states over the arc, shared by every propagation of the ranging (nodes computed once). */
  readonly perturbers: PerturberTable;
}

const dot = (a: Vec3, b: Vec3): number => a[0] * b[0] + a[1] * b[1] + a[2] * b[2];

function makeContext(observations: readonly PreparedObservation[], attributable: Attributable): Context {
  const used = observations.filter((_, i) => attributable.used[i]);
  const epochDate = new Date(attributable.epochMs);
  const nearest = used.reduce((best, o) => (Math.abs(o.timeMs - attributable.epochMs) < Math.abs(best.timeMs - attributable.epochMs) ? o : best));
  const reference = observerGeometry(nearest.observer, epochDate);
  const earthState = HelioState(Body.Earth, MakeTime(epochDate));
  const dtDays = used.map((o) => (o.timeMs - attributable.epochMs) / (SECONDS_PER_DAY * 1000));
  const weights = used.map((o) => 1 / (o.sigmaRad * o.sigmaRad));
  const projected = used.map((o) => project(attributable.frame, o.unit));
  const c = attributable.covariance;
  return {
    observations: used,
    geometries: used.map((o) => observerGeometry(o.observer, o.timeUtc)),
    timesTt: used.map((o) => ttFromUtc(o.timeUtc)),
    dtDays,
    weights,
    observedXi: projected.map((p) => p[0]),
    observedEta: projected.map((p) => p[1]),
    attributable,
    reference,
    earth: { r: [earthState.x, earthState.y, earthState.z], v: [earthState.vx, earthState.vy, earthState.vz] },
    epochTt: ttFromUtc(epochDate),
    normalInverse: [c[0]![0]!, c[0]![2]!, c[2]![2]!],
    meanV: meanTrackletV(used),
    perturbers: new PerturberTable(),
  };
}

/** Direction and its time derivative (rad/day) for parameters (xi0, eta0, xiDot, etaDot). */
function directionOf(ctx: Context, params: readonly number[]): { u: Vec3; uDot: Vec3 } {
  const frame = ctx.attributable.frame;
  const u = unproject(frame, params[0]!, params[1]!);
  const raw: Vec3 = [0, 1, 2].map((k) => params[2]! * frame.east[k]! + params[3]! * frame.north[k]!) as Vec3;
  const along = dot(raw, u);
  return { u, uDot: [raw[0] - along * u[0], raw[1] - along * u[1], raw[2] - along * u[2]] };
}

function stateOf(ctx: Context, params: readonly number[], rho: number, rhoDot: number): HeliocentricState {
  const { u, uDot } = directionOf(ctx, params);
  const o = ctx.reference;
  const vx = o.velocity.x + rhoDot * u[0] + rho * uDot[0];
  const vy = o.velocity.y + rhoDot * u[1] + rho * uDot[1];
  const vz = o.velocity.z + rhoDot * u[2] + rho * uDot[2];
  // The light seen at the epoch left the object one light time earlier.
  const tau = rho / LIGHT_AU_PER_DAY;
  return {
    tt: ctx.epochTt,
    x: o.position.x + rho * u[0] + vx * tau,
    y: o.position.y + rho * u[1] + vy * tau,
    z: o.position.z + rho * u[2] + vz * tau,
    vx,
    vy,
    vz,
  };
}

/** Range-rate interval (au/day) of orbits bound to the Sun at range rho, and the sub-interval bound to the Earth (excluded). */
function admissibleRates(ctx: Context, rho: number): { lo: number; hi: number; earthLo: number; earthHi: number } | null {
  const { u, uDot } = directionOf(ctx, [0, 0, ...paramsRate(ctx)]);
  const o = ctx.reference;
  const r: Vec3 = [o.position.x + rho * u[0], o.position.y + rho * u[1], o.position.z + rho * u[2]];
  const w: Vec3 = [o.velocity.x + rho * uDot[0], o.velocity.y + rho * uDot[1], o.velocity.z + rho * uDot[2]];
  const wu = dot(w, u);
  const disc = wu * wu - dot(w, w) + (2 * GM_SUN_AU3_PER_DAY2) / Math.hypot(...r);
  if (!(disc > 0)) return null;
  const rg: Vec3 = [r[0] - ctx.earth.r[0], r[1] - ctx.earth.r[1], r[2] - ctx.earth.r[2]];
  const wg: Vec3 = [w[0] - ctx.earth.v[0], w[1] - ctx.earth.v[1], w[2] - ctx.earth.v[2]];
  const wgu = dot(wg, u);
  const discEarth = wgu * wgu - dot(wg, wg) + (2 * (GM_EARTH_AU3_PER_DAY2 + GM_MOON_AU3_PER_DAY2)) / Math.hypot(...rg);
  const root = Math.sqrt(disc);
  const rootEarth = discEarth > 0 ? Math.sqrt(discEarth) : 0;
  return { lo: -wu - root, hi: -wu + root, earthLo: -wgu - rootEarth, earthHi: -wgu + rootEarth };
}

/** The attributable's rates in rad/day. */
function paramsRate(ctx: Context): [number, number] {
  const k = SECONDS_PER_DAY / ARCSEC_PER_RAD;
  return [ctx.attributable.raRateArcsecPerS * k, ctx.attributable.decRateArcsecPerS * k];
}

/**
 * Fits the four angular parameters at many (rho, rhoDot) nodes at once: one
 * ensemble propagation per Gauss-Newton evaluation. With `fitRate` the
 * range-rate is a fifth parameter, its partials by a forward difference of
 * RATE_STEP_AU_PER_DAY (one more propagation per evaluation). Returns the
 * parameters, chi^2 and (with fitRate) the fitted rate and its sigma per node.
 */
function fitNodes(
  ctx: Context,
  nodes: readonly { rho: number; rate: number }[],
  evaluations: number,
  options: { fitRate?: boolean; start?: readonly (readonly number[])[]; rateBounds?: readonly { lo: number; hi: number }[] } = {},
): { params: number[][]; chiSquare: number[]; rates: number[]; rateSigma: number[] } {
  const [xiDot, etaDot] = paramsRate(ctx);
  const params = nodes.map((_, j) => [...(options.start?.[j] ?? [0, 0, xiDot, etaDot])]);
  const rates = nodes.map((n) => n.rate);
  const rateSigma = nodes.map(() => Infinity);
  const chiSquare = nodes.map(() => Infinity);
  const nObs = ctx.observations.length;
  const [n00, n01, n11] = ctx.normalInverse;
  const fitRate = options.fitRate ?? false;
  const residuals = (states: HeliocentricState[]): { xi: Float64Array; eta: Float64Array } => {
    const xi = new Float64Array(states.length * nObs);
    const eta = new Float64Array(states.length * nObs);
    streamEnsemble(
      states,
      ctx.timesTt,
      (k, pos, vel) => {
        const geometry = ctx.geometries[k]!;
        for (let m = 0; m < states.length; m++) {
          let place;
          try {
            place = astrometricPlace(
              { x: pos[3 * m]!, y: pos[3 * m + 1]!, z: pos[3 * m + 2]! },
              { x: vel[3 * m]!, y: vel[3 * m + 1]!, z: vel[3 * m + 2]! },
              geometry,
            );
          } catch (err) {
            // A trial state far outside the admissible region (a wild Gauss-Newton step) gets no weight.
            if (!(err instanceof OrbitConvergenceError)) throw err;
            xi[m * nObs + k] = Infinity;
            eta[m * nObs + k] = Infinity;
            continue;
          }
          const p = project(ctx.attributable.frame, unitFromRaDec((place.raDeg * Math.PI) / 180, (place.decDeg * Math.PI) / 180));
          xi[m * nObs + k] = ctx.observedXi[k]! - p[0];
          eta[m * nObs + k] = ctx.observedEta[k]! - p[1];
        }
      },
      { stepFraction: 0.2, maxStepDays: 0.05, perturbers: ctx.perturbers },
    );
    return { xi, eta };
  };
  for (let evaluation = 0; evaluation < evaluations; evaluation++) {
    const last = evaluation === evaluations - 1;
    const states = nodes.map((node, j) => stateOf(ctx, params[j]!, node.rho, rates[j]!));
    if (fitRate && !last) nodes.forEach((node, j) => states.push(stateOf(ctx, params[j]!, node.rho, rates[j]! + RATE_STEP_AU_PER_DAY)));
    const res = residuals(states);
    for (let m = 0; m < nodes.length; m++) {
      let chi = 0;
      for (let k = 0; k < nObs; k++) {
        const rx = res.xi[m * nObs + k]!, ry = res.eta[m * nObs + k]!;
        chi += ctx.weights[k]! * (rx * rx + ry * ry);
      }
      chiSquare[m] = chi;
      if (last || !Number.isFinite(chi)) continue;
      const p = params[m]!;
      if (!fitRate) {
        let bx0 = 0, bx1 = 0, by0 = 0, by1 = 0;
        for (let k = 0; k < nObs; k++) {
          const w = ctx.weights[k]!, dt = ctx.dtDays[k]!;
          const rx = res.xi[m * nObs + k]!, ry = res.eta[m * nObs + k]!;
          bx0 += w * rx; bx1 += w * rx * dt; by0 += w * ry; by1 += w * ry * dt;
        }
        p[0]! += n00 * bx0 + n01 * bx1;
        p[2]! += n01 * bx0 + n11 * bx1;
        p[1]! += n00 * by0 + n01 * by1;
        p[3]! += n01 * by0 + n11 * by1;
        continue;
      }
      // Five parameters: rows [1, 0, dt, 0, Jx] (xi) and [0, 1, 0, dt, Jy] (eta); residual = obs - pred, J = d(pred)/d(rate).
      const normal = Array.from({ length: 5 }, () => new Array<number>(5).fill(0));
      const rhs = new Array<number>(5).fill(0);
      const off = nodes.length + m;
      for (let k = 0; k < nObs; k++) {
        const w = ctx.weights[k]!, dt = ctx.dtDays[k]!;
        const jx = (res.xi[m * nObs + k]! - res.xi[off * nObs + k]!) / RATE_STEP_AU_PER_DAY;
        const jy = (res.eta[m * nObs + k]! - res.eta[off * nObs + k]!) / RATE_STEP_AU_PER_DAY;
        const rowX = [1, 0, dt, 0, jx], rowY = [0, 1, 0, dt, jy];
        for (const [row, r] of [[rowX, res.xi[m * nObs + k]!], [rowY, res.eta[m * nObs + k]!]] as const) {
          for (let a = 0; a < 5; a++) {
            rhs[a]! += w * row[a]! * r;
            for (let b2 = 0; b2 < 5; b2++) normal[a]![b2]! += w * row[a]! * row[b2]!;
          }
        }
      }
      if (!rhs.every(Number.isFinite)) continue;
      const inverse = invert(normal);
      if (!inverse) continue;
      const step = inverse.map((row) => row.reduce((sum, c, b2) => sum + c * rhs[b2]!, 0));
      for (let a = 0; a < 4; a++) p[a]! += step[a]!;
      const bounds = options.rateBounds?.[m];
      rates[m] = bounds ? Math.min(Math.max(rates[m]! + step[4]!, bounds.lo), bounds.hi) : rates[m]! + step[4]!;
      rateSigma[m] = Math.sqrt(Math.max(inverse[4]![4]!, 0));
    }
  }
  return { params, chiSquare, rates, rateSigma };
}

/** Forward-difference step for range-rate partials, au/day (1.7 m/s). */
const RATE_STEP_AU_PER_DAY = 1e-6;

interface Box {
  logLo: number;
  logHi: number;
  rateLo: number;
  rateHi: number;
}

/** ln(exp(a) + exp(b)). */
function logAdd(a: number, b: number): number {
  const top = Math.max(a, b);
  if (!Number.isFinite(top)) return top;
  return top + Math.log(Math.exp(a - top) + Math.exp(b - top));
}

/**
 * The prior in the form ranging needs: ln of its mass in a grid cell, and ln
 * of its density per d(ln rho) d(rhoDot) at a point (the node's fitted
 * angles fix the state). For the mixture each component is normalised over
 * the first pass's grid, which spans the whole admissible region.
 */
interface PriorModel {
  readonly kind: RangePriorKind;
  /** The encounter component's window on the time to the closest approach, days. */
  readonly windowDays: number;
  /** ln of the prior's mass in a cell, and the encounter component's share of it (0 without that component). */
  cellMass(params: readonly number[], g: GridNode): { log: number; encounterShare: number };
  logDensity(params: readonly number[], rho: number, rate: number): number;
}

/**
 * The mixture's second component: close encounters, whatever their orbit.
 * Objects pass the Earth on straight lines (gravitational focusing left out)
 * with closest distance b log-uniform between ENCOUNTER_MISS_AU.min and .max,
 * speed relative to the Earth v log-uniform between ENCOUNTER_SPEED_KM_S.min
 * and .max (g(v) proportional to 1/v), directions isotropic, and the closest
 * approach at most ENCOUNTER_WINDOW_DAYS before or after the observation,
 * uniformly. With d^3r = v d^2b d(tau) at fixed velocity, the phase-space
 * density is n = p(b) p(v) p(tau) / v, proportional to g(v) / (b^2 v^3)
 * (p per d^2b = 1 / (2 pi b^2 ln(bmax/bmin)), p per d^3v = g(v) / (4 pi v^2));
 * times the attributable volume rho^4 (population-prior.ts) and with
 * b = rho c / v (c the transverse speed), the prior per d(ln rho) d(rhoDot) is
 * rho^3 g(v) / (c^2 v), inside smooth windows on b and on the time to the
 * closest approach |tau| = rho |rhoDot_g| / v^2 (rhoDot_g the radial speed
 * relative to the Earth's centre). It needs no model of where such objects
 * come from: a fast-moving tracklet may be near, a slow one near only if it
 * is heading almost straight at the Earth, which the b window bounds.
 * Ranges are broad choices (from memory of typical close-approach speeds and
 * discovery leads), stated so they can be checked. The window is not
 * normalised by its length, so a longer one also adds weight to the component
 * (far, later encounters). It was 15 days; on the pooled reference sets (320
 * cases per population, docs/accuracy.md) 10 days left 14 encounters outside
 * 3 sigma at some horizon where 15 days left 19, the other figures within
 * their noise.
 */
export const ENCOUNTER_MISS_AU = { min: 5e-5, max: 0.3 } as const;
export const ENCOUNTER_SPEED_KM_S = { min: 0.5, max: 40 } as const;
export const ENCOUNTER_WINDOW_DAYS = 10;
const KM_S_IN_AU_PER_DAY = SECONDS_PER_DAY / KM_PER_AU;
/**
 * Sub-points over a cell's range-rate for the encounter component's integral.
 * The cell integrals only steer the grid's refinement and the proposals; the
 * virtual orbits are weighted by the density at their own points.
 */
const ENCOUNTER_RATE_STEPS = 16;

/** Soft window: about 1 inside [lo, hi], falling as the fourth power outside. */
function softWindow(x: number, lo: number, hi: number): number {
  const a = lo / x, b = x / hi;
  const a2 = a * a, b2 = b * b;
  return 1 / ((1 + a2 * a2) * (1 + b2 * b2));
}

/** Line-of-sight offset d and transverse speed c (au/day) of the velocity relative to the Earth's centre, for parameters and range: v^2 = (rhoDot + d)^2 + c^2. */
function relativeVelocityParts(ctx: Context, params: readonly number[], rho: number): { d: number; c: number } {
  const { u, uDot } = directionOf(ctx, params);
  const w0: Vec3 = [ctx.reference.velocity.x - ctx.earth.v[0], ctx.reference.velocity.y - ctx.earth.v[1], ctx.reference.velocity.z - ctx.earth.v[2]];
  const d = dot(w0, u);
  const t: Vec3 = [w0[0] - d * u[0] + rho * uDot[0], w0[1] - d * u[1] + rho * uDot[1], w0[2] - d * u[2] + rho * uDot[2]];
  return { d, c: Math.hypot(...t) };
}

/** The encounter component's density per d(ln rho) d(rhoDot) (unnormalised), from the parts of the relative velocity. */
export function encounterDensity(rho: number, rate: number, d: number, c: number, windowDays: number): number {
  const radial = rate + d;
  const v2 = radial * radial + c * c;
  const v = Math.sqrt(v2);
  if (!(v > 0 && c > 0)) return 0;
  const speedKmS = v / KM_S_IN_AU_PER_DAY;
  const miss = (rho * c) / v;
  const tau = (rho * Math.abs(radial)) / v2;
  return (
    ((rho * rho * rho) / (c * c * v * speedKmS)) *
    softWindow(speedKmS, ENCOUNTER_SPEED_KM_S.min, ENCOUNTER_SPEED_KM_S.max) *
    softWindow(miss, ENCOUNTER_MISS_AU.min, ENCOUNTER_MISS_AU.max) /
    (1 + (tau / windowDays) ** 4)
  );
}

/** ln of the encounter component's density per d(ln rho) d(rhoDot) at a point (unnormalised). */
function encounterLogDensity(ctx: Context, params: readonly number[], rho: number, rate: number, windowDays: number): number {
  const { d, c } = relativeVelocityParts(ctx, params, rho);
  return Math.log(encounterDensity(rho, rate, d, c, windowDays));
}

/**
 * Half-width in range-rate (au/day) of the encounter density's peak at one
 * range. In rhoDot the density is a Lorentzian 1 / (radial^2 + c^2) centred
 * on radial = rhoDot + d = 0, cut by the window on the time to the closest
 * approach |tau| = rho |radial| / v^2, which leaves |radial| below about
 * window x c^2 / rho near the peak. For a slow object far away (0.3 au at
 * 1.4 km/s) that cut is some 50 times narrower than c, and far narrower than
 * a cell. The two scales are combined as 1 / h^2 = 1 / c^2 + 1 / s^2.
 */
function encounterPeakWidth(rho: number, c: number, windowDays: number): number {
  const s = (windowDays * c * c) / rho;
  return 1 / Math.sqrt(1 / (c * c) + 1 / (s * s));
}

/**
 * Bounds of the rate interval [lo, hi] in w = asinh((rhoDot + d) / h), h the
 * peak's half-width (encounterPeakWidth), with d(rhoDot) = sqrt(radial^2 + h^2) dw.
 * In w the peak is about one unit wide and the tails, which fall as a power of
 * |radial| and may rise again where fast approaches enter the window, spread
 * over ln |radial|; so a midpoint rule in w follows a peak far narrower than
 * its cell as well as the tails, and a uniform draw in w is a proposal with a
 * peak like the density's and tails (1 / |radial|) heavier than its.
 */
function peakBounds(lo: number, hi: number, d: number, h: number): { wLo: number; wHi: number } {
  return { wLo: Math.asinh((lo + d) / h), wHi: Math.asinh((hi + d) / h) };
}

/**
 * The encounter density (unnormalised, per d(ln rho) d(rhoDot)) integrated
 * over rhoDot from lo to hi at one range, by the midpoint rule with `steps`
 * points in w (peakBounds). d and c as in relativeVelocityParts; rates in au/day.
 */
export function encounterRateIntegral(rho: number, lo: number, hi: number, d: number, c: number, windowDays: number, steps = ENCOUNTER_RATE_STEPS): number {
  if (!(c > 0)) return 0;
  const h = encounterPeakWidth(rho, c, windowDays);
  const { wLo, wHi } = peakBounds(lo, hi, d, h);
  const dw = (wHi - wLo) / steps;
  let total = 0;
  for (let b = 0; b < steps; b++) {
    const radial = h * Math.sinh(wLo + (b + 0.5) * dw);
    total += encounterDensity(rho, radial - d, d, c, windowDays) * Math.hypot(radial, h) * dw;
  }
  return total;
}

/** ln of the encounter component's integral over a node's cell: midpoint rule in ln rho (PRIOR_CELL_POINTS) and encounterRateIntegral in rhoDot. */
function encounterLogCell(ctx: Context, params: readonly number[], g: GridNode, windowDays: number): number {
  let total = 0;
  for (let a = 0; a < PRIOR_CELL_POINTS; a++) {
    const rho = g.rho * Math.exp(((a + 0.5) / PRIOR_CELL_POINTS - 0.5) * g.logWidth);
    const { d, c } = relativeVelocityParts(ctx, params, rho);
    total += encounterRateIntegral(rho, g.rate - g.rateWidth / 2, g.rate + g.rateWidth / 2, d, c, windowDays);
  }
  return Math.log(total / PRIOR_CELL_POINTS) + Math.log(g.logWidth);
}

function priorModel(ctx: Context, kind: RangePriorKind, k: number, encounterLogWeight: number, windowDays: number): PriorModel {
  const admissible = (rho: number, rate: number): boolean => {
    const interval = admissibleRates(ctx, rho);
    return interval !== null && rate > interval.lo && rate < interval.hi && !(rate > interval.earthLo && rate < interval.earthHi);
  };
  const logPopDensity = (params: readonly number[], rho: number, rate: number): number => populationLogPrior(stateOf(ctx, params, rho, rate), ctx.reference.position, rho, ctx.meanV) + Math.log(rho);
  return {
    kind,
    windowDays,
    cellMass(params, g) {
      if (kind === 'powerLaw') return { log: (k + 1) * Math.log(g.rho) + Math.log(g.logWidth * g.rateWidth), encounterShare: 0 };
      if (kind === 'population') return { log: populationLogCell(ctx, params, g), encounterShare: 0 };
      if (kind === 'encounter') return { log: encounterLogCell(ctx, params, g, windowDays), encounterShare: 1 };
      const encounter = encounterLogWeight + encounterLogCell(ctx, params, g, windowDays);
      const log = logAdd(populationLogCell(ctx, params, g), encounter);
      const share = Math.exp(encounter - log);
      return { log, encounterShare: Number.isFinite(share) ? share : 0 };
    },
    logDensity(params, rho, rate) {
      if (!admissible(rho, rate)) return -Infinity;
      if (kind === 'powerLaw') return (k + 1) * Math.log(rho);
      if (kind === 'population') return logPopDensity(params, rho, rate);
      if (kind === 'encounter') return encounterLogDensity(ctx, params, rho, rate, windowDays);
      return logAdd(logPopDensity(params, rho, rate), encounterLogWeight + encounterLogDensity(ctx, params, rho, rate, windowDays));
    },
  };
}

/** Runs the ranging passes for a tracklet whose attributable is given. */
export function systematicRanging(observations: readonly PreparedObservation[], attributable: Attributable, options: RangingOptions = {}): RangingResult {
  const ctx = makeContext(observations, attributable);
  const prior = rangePriorOf(options);
  const k = options.rangePriorExponent ?? DEFAULT_RANGE_PRIOR_EXPONENT;
  if (!Number.isFinite(k)) throw new EstimationInputError('ranging.rangePriorExponent', k, 'expected a finite exponent k of the range prior rho^k');
  const encounterLogWeight = options.mixtureEncounterLogWeight ?? MIXTURE_ENCOUNTER_LOG_WEIGHT;
  const proposals = options.proposals ?? 0;
  if (!(Number.isInteger(proposals) && proposals >= 0 && proposals <= MAX_PROPOSALS)) throw new EstimationInputError('ranging.proposals', proposals, `expected a whole number of proposals from 0 to ${MAX_PROPOSALS}`);
  if (!Number.isFinite(encounterLogWeight)) throw new EstimationInputError('ranging.mixtureEncounterLogWeight', encounterLogWeight, 'expected a finite natural logarithm of the encounter component\'s weight');
  const windowDays = options.encounterWindowDays ?? ENCOUNTER_WINDOW_DAYS;
  if (!(Number.isFinite(windowDays) && windowDays > 0)) throw new EstimationInputError('ranging.encounterWindowDays', windowDays, 'expected a positive number of days either side of the closest approach');
  const model = priorModel(ctx, prior, k, encounterLogWeight, windowDays);
  const rangeNodes = options.rangeNodes ?? 36;
  const rateNodes = options.rateNodes ?? 10;
  const maxPasses = options.passes ?? 5;
  let box: Box = { logLo: Math.log(RANGE_MIN_AU), logHi: Math.log(RANGE_MAX_AU), rateLo: -Infinity, rateHi: Infinity };
  let nodes: RangingNode[] = [];
  let passMinOfNodes = 0;
  let evaluated = 0;
  let pass = 0;
  let minChi = Infinity;
  while (pass < maxPasses) {
    pass++;
    const logWidth = (box.logHi - box.logLo) / rangeNodes;
    const grid: GridNode[] = [];
    for (let i = 0; i < rangeNodes; i++) {
      const rho = Math.exp(box.logLo + (i + 0.5) * logWidth);
      const interval = admissibleRates(ctx, rho);
      if (!interval) continue;
      // Every row spans its whole admissible interval; the row profile then finds a tight range-rate wherever the ridge runs.
      const lo = interval.lo, hi = interval.hi;
      if (!(hi > lo)) continue;
      const rateWidth = (hi - lo) / rateNodes;
      for (let j = 0; j < rateNodes; j++) {
        const rate = lo + (j + 0.5) * rateWidth;
        if (rate > interval.earthLo && rate < interval.earthHi) continue;
        grid.push({ rho, rate, logWidth, rateWidth });
      }
    }
    if (grid.length === 0) {
      if (pass === 1) throw new EstimationFailedError('no orbit bound to the Sun matches the tracklet at any range from 3e-4 to 6 au');
      break;
    }
    const evaluations = options.evaluations ?? 3;
    let fitted: { params: number[][]; chiSquare: number[] } = fitNodes(ctx, grid, evaluations);
    evaluated += grid.length;
    // Rows where the data pin the range-rate more tightly than the grid resolves are re-gridded around their minimum.
    const profiled = profileRows(ctx, grid, fitted, rateNodes, evaluations);
    evaluated += profiled.evaluated;
    if (profiled.grid !== grid) {
      grid.splice(0, grid.length, ...profiled.grid);
      fitted = profiled.fitted;
    }
    const passMin = Math.min(...fitted.chiSquare);
    // Log weight: likelihood x the prior's integral over the node's cell.
    const masses = grid.map((g, j) => model.cellMass(fitted.params[j]!, g));
    const logWeights = grid.map((_, j) => -(fitted.chiSquare[j]! - passMin) / 2 + masses[j]!.log);
    const maxLog = Math.max(...logWeights.filter((w) => !Number.isNaN(w)));
    const candidate: RangingNode[] = grid.map((g, j) => ({
      rangeAu: g.rho,
      rangeRateAuPerDay: g.rate,
      logRangeWidth: g.logWidth,
      rateWidth: g.rateWidth,
      params: fitted.params[j]!,
      chiSquare: fitted.chiSquare[j]!,
      encounterShare: masses[j]!.encounterShare,
      weight: Number.isFinite(maxLog) && Number.isFinite(logWeights[j]!) ? Math.exp(logWeights[j]! - maxLog) : 0,
    }));
    const total = candidate.reduce((s, n) => s + n.weight, 0);
    if (!(total > 0) || !Number.isFinite(total)) {
      if (pass === 1) throw new EstimationFailedError('the ranging weights are all zero or not finite');
      break;
    }
    for (const n of candidate) n.weight /= total;
    // A later pass replaces the earlier one only if it found fits at least as good.
    if (pass > 1 && passMin > minChi + 1) break;
    nodes = candidate;
    passMinOfNodes = passMin;
    minChi = passMin;
    const effective = 1 / nodes.reduce((s, n) => s + n.weight * n.weight, 0);
    const next = concentratedBox(nodes);
    const shrinksRange = next.logHi - next.logLo < 0.5 * (box.logHi - box.logLo);
    if (!shrinksRange && effective > MIN_EFFECTIVE_NODES) break;
    // Refined passes stay inside the documented range interval.
    box = { logLo: Math.max(next.logLo, Math.log(RANGE_MIN_AU)), logHi: Math.min(next.logHi, Math.log(RANGE_MAX_AU)), rateLo: -Infinity, rateHi: Infinity };
  }
  const finalNodes = nodes;
  const chiOffset = passMinOfNodes;
  return {
    epochTt: ctx.epochTt,
    nodes: finalNodes,
    passes: pass,
    minChiSquare: minChi,
    evaluatedNodes: evaluated,
    prior,
    priorExponent: prior === 'powerLaw' ? k : null,
    mixtureEncounterLogWeight: prior === 'mixture' ? encounterLogWeight : null,
    stateOf: (params, rho, rate) => stateOf(ctx, params, rho, rate),
    sample: (covariance, count, random) => sampleInsideCells(ctx, model, finalNodes, chiOffset, covariance, count, Math.max(PROPOSALS_PER_MEMBER * count, proposals), random),
  };
}

/** Proposals per virtual orbit in the importance sampling inside the cells. */
const PROPOSALS_PER_MEMBER = 2;
/** Most proposals one sampling may ask for (each is a small orbit fit). */
const MAX_PROPOSALS = 20_000;
/**
 * Bounds on the share of a cell's proposals drawn from the encounter
 * component's peak in range-rate (peakBounds) rather than
 * uniformly: the share is that component's part of the cell's prior mass,
 * kept inside these bounds so that neither shape is ever left out
 * (defensive importance sampling, Hesterberg 1995, Technometrics 37, 185).
 */
const PEAK_SHARE = { min: 0.1, max: 0.9 } as const;
/** Gauss-Newton evaluations for a proposal's angles, started from its cell's fitted node (at most half a cell away). */
const PROPOSAL_EVALUATIONS = 2;

/**
 * Virtual orbits sampled continuously from the ranging posterior by
 * importance sampling inside the grid's cells (e.g. Robert & Casella 2004,
 * Monte Carlo Statistical Methods, 2nd ed., ch. 3; in ranging, the
 * continuous-sampling idea of Muinonen et al. 2006, CMDA 94, 305):
 * proposals pick a cell with its posterior weight and a point in the cell
 * (cellProposal); the point's angles are fitted by Gauss-Newton from the
 * cell's node, and its weight is target / proposal = exp(-chi^2/2) x prior
 * density at the point / the proposal's density there. When the effective
 * sample size is below REFINE_BELOW of the proposals, as many again are drawn
 * from Gaussian kernels on the heaviest (kernelsAround) and every point is
 * weighted against the mean of the two proposals. `count` members are then
 * drawn by systematic resampling of the weights (Kitagawa 1996, J. Comput.
 * Graph. Stat. 5, 1), each with the attributable's Gaussian angle noise (its
 * covariance, the angles' uncertainty at fixed range and range-rate) added to
 * its fitted angles. The effective sample size (sum w)^2 / sum w^2 of all the
 * proposals is returned.
 */
function sampleInsideCells(
  ctx: Context,
  model: PriorModel,
  nodes: readonly RangingNode[],
  chiOffset: number,
  covariance: readonly (readonly number[])[],
  count: number,
  proposalCount: number,
  random: RandomSource,
): SampledOrbits {
  const cells = systematicResample(nodes.map((n) => n.weight), proposalCount, random.uniform());
  const inCells = cellProposal(ctx, model, nodes);
  const first = cells.map((j) => inCells.draw(j, random));
  const firstFit = fitNodes(ctx, first, PROPOSAL_EVALUATIONS + 1, { start: cells.map((j) => nodes[j]!.params) });
  const logTargetOf = (p: { rho: number; rate: number }, params: readonly number[], chi: number): number =>
    Number.isFinite(chi) ? -(chi - chiOffset) / 2 + model.logDensity(params, p.rho, p.rate) : -Infinity;
  let points: { rho: number; rate: number }[] = first;
  let fittedParams: number[][] = firstFit.params;
  let logTarget = first.map((p, i) => logTargetOf(p, firstFit.params[i]!, firstFit.chiSquare[i]!));
  let logW = logTarget.map((l, i) => l - first[i]!.logProposal);
  if (effectiveSize(logW) < REFINE_BELOW * proposalCount) {
    // A second round around the heavy proposals; both rounds weighted against their mixture.
    const kernels = kernelsAround(first, cells.map((j) => nodes[j]!), logW, firstFit.params);
    const centres = systematicResample(kernels.map((k) => k.weight), proposalCount, random.uniform());
    const second = centres.map((k) => {
      const kernel = kernels[k]!;
      return { rho: Math.exp(kernel.logRho + kernel.sdLogRho * random.normal()), rate: kernel.rate + kernel.sdRate * random.normal() };
    });
    const secondFit = fitNodes(ctx, second, PROPOSAL_EVALUATIONS + 1, { start: centres.map((k) => kernels[k]!.params) });
    const secondTarget = second.map((p, i) => logTargetOf(p, secondFit.params[i]!, secondFit.chiSquare[i]!));
    points = [...first, ...second];
    fittedParams = [...firstFit.params, ...secondFit.params];
    logTarget = [...logTarget, ...secondTarget];
    const logFirst = [...first.map((p) => p.logProposal), ...second.map((p) => inCells.logDensity(p.rho, p.rate))];
    logW = points.map((p, i) => {
      const logSecond = kernelLogDensity(kernels, p.rho, p.rate);
      // Deterministic mixture: equal numbers from each round, so the mixture is their mean.
      return logTarget[i]! - (logAdd(logFirst[i]!, logSecond) - Math.LN2);
    });
  }
  const top = Math.max(...logW);
  if (!Number.isFinite(top)) throw new EstimationFailedError('no sampled orbit inside the ranging cells fits the tracklet');
  const w = logW.map((l) => (Number.isFinite(l) ? Math.exp(l - top) : 0));
  const chol = cholesky(covariance);
  const chosen = systematicResample(w, count, random.uniform());
  const members = chosen.map((i): VirtualOrbit => {
    const z = [random.normal(), random.normal(), random.normal(), random.normal()];
    const base = fittedParams[i]!;
    const params = base.map((p, a) => p + chol[a]!.reduce((s, l, b) => s + l * z[b]!, 0));
    const { rho, rate } = points[i]!;
    return { state: stateOf(ctx, params, rho, rate), rangeAu: rho, rangeRateAuPerDay: rate, fittedParams: base };
  });
  // Systematic resampling visits proposals in order; shuffle so any prefix is a fair sample.
  for (let m = members.length - 1; m > 0; m--) {
    const s = Math.floor(random.uniform() * (m + 1));
    [members[m], members[s]] = [members[s]!, members[m]!];
  }
  return { members, effectiveSampleSize: effectiveSize(logW), proposals: points.length, rounds: points.length > proposalCount ? 2 : 1 };
}

/**
 * The proposal inside the cells: a cell by its node's weight, ln rho uniform
 * in it, rhoDot uniform or, for the encounter component's share of the cell's
 * prior mass (within PEAK_SHARE), uniform in w about that component's peak
 * (peakBounds). `logDensity` is the proposal's density per d(ln rho) d(rhoDot)
 * at any point (-Infinity outside every cell); rows of cells do not overlap,
 * nor do the cells of a row.
 */
function cellProposal(
  ctx: Context,
  model: PriorModel,
  nodes: readonly RangingNode[],
): { draw: (j: number, random: RandomSource) => { rho: number; rate: number; logProposal: number }; logDensity: (rho: number, rate: number) => number } {
  // The share of a cell's proposals drawn about the peak: the encounter component's share of the cell's mass, within PEAK_SHARE.
  const shareOf = (j: number): number => {
    const raw = nodes[j]!.encounterShare;
    return raw > 0 ? Math.min(Math.max(raw, PEAK_SHARE.min), PEAK_SHARE.max) : 0;
  };
  const peakOf = (j: number, rho: number): { d: number; h: number; wLo: number; wHi: number } | null => {
    const n = nodes[j]!;
    const { d, c } = relativeVelocityParts(ctx, n.params, rho);
    const h = c > 0 ? encounterPeakWidth(rho, c, model.windowDays) : 0;
    if (!(h > 0)) return null;
    const { wLo, wHi } = peakBounds(n.rangeRateAuPerDay - n.rateWidth / 2, n.rangeRateAuPerDay + n.rateWidth / 2, d, h);
    return wHi > wLo ? { d, h, wLo, wHi } : null;
  };
  // Rows of cells (one range each) with the cells that carry weight, for finding the cell of a point.
  const byRange = new Map<number, number[]>();
  nodes.forEach((n, j) => {
    if (n.weight > 0) byRange.set(n.rangeAu, [...(byRange.get(n.rangeAu) ?? []), j]);
  });
  const rows = [...byRange.entries()].map(([rangeAu, cells]) => ({ logRho: Math.log(rangeAu), halfWidth: nodes[cells[0]!]!.logRangeWidth / 2, cells }));
  const logDensityIn = (j: number, rho: number, rate: number): number => {
    const n = nodes[j]!;
    const beta = shareOf(j);
    const peak = beta > 0 ? peakOf(j, rho) : null;
    const rateDensity = peak !== null ? (1 - beta) / n.rateWidth + beta / ((peak.wHi - peak.wLo) * Math.hypot(rate + peak.d, peak.h)) : 1 / n.rateWidth;
    return Math.log(n.weight) - Math.log(n.logRangeWidth) + Math.log(rateDensity);
  };
  return {
    draw(j, random) {
      const n = nodes[j]!;
      const rho = n.rangeAu * Math.exp((random.uniform() - 0.5) * n.logRangeWidth);
      const lo = n.rangeRateAuPerDay - n.rateWidth / 2, hi = n.rangeRateAuPerDay + n.rateWidth / 2;
      const beta = shareOf(j);
      const pick = random.uniform(), at = random.uniform();
      const peak = beta > 0 ? peakOf(j, rho) : null;
      const drawn = peak !== null && pick < beta ? peak.h * Math.sinh(peak.wLo + at * (peak.wHi - peak.wLo)) - peak.d : lo + at * n.rateWidth;
      const rate = Math.min(Math.max(drawn, lo), hi);
      return { rho, rate, logProposal: logDensityIn(j, rho, rate) };
    },
    logDensity(rho, rate) {
      const logRho = Math.log(rho);
      for (const row of rows) {
        if (Math.abs(logRho - row.logRho) > row.halfWidth) continue;
        for (const j of row.cells) {
          const n = nodes[j]!;
          if (Math.abs(rate - n.rangeRateAuPerDay) <= n.rateWidth / 2) return logDensityIn(j, rho, rate);
        }
      }
      return -Infinity;
    },
  };
}

/** (sum w)^2 / sum w^2 of weights given as logarithms. */
function effectiveSize(logW: readonly number[]): number {
  const top = Math.max(...logW);
  if (!Number.isFinite(top)) return 0;
  let sum = 0, sum2 = 0;
  for (const l of logW) {
    const w = Number.isFinite(l) ? Math.exp(l - top) : 0;
    sum += w;
    sum2 += w * w;
  }
  return (sum * sum) / sum2;
}

/**
 * A second round of proposals is drawn when the first's effective sample size
 * is below this fraction of its proposals: the posterior then has structure
 * finer than the cells (a sharp edge of the population model), and a few
 * proposals carry the weight.
 */
const REFINE_BELOW = 0.1;
/** The second round's Gaussian kernels: standard deviations this fraction of the widths of the cell a heavy proposal came from. */
const KERNEL_FRACTION = 0.25;
/** Kernels are placed on the heaviest proposals holding all but this fraction of the weight, at most MAX_KERNELS of them. */
const KERNEL_WEIGHT_LEFT_OUT = 1e-3;
const MAX_KERNELS = 500;

interface Kernel {
  readonly logRho: number;
  readonly rate: number;
  readonly sdLogRho: number;
  readonly sdRate: number;
  readonly weight: number;
  readonly params: readonly number[];
}

/**
 * Gaussian kernels in (ln rho, rhoDot) on the first round's heaviest
 * proposals, weighted by their importance weights: the second round of an
 * adaptive importance sampling (population Monte Carlo, Cappe et al. 2004,
 * J. Comput. Graph. Stat. 13, 907), whose points are weighted with the first
 * round's against the mixture of both proposals (deterministic mixture
 * weights, Owen & Zhou 2000, JASA 95, 135), so neither round's gaps bias the
 * result.
 */
function kernelsAround(points: readonly { rho: number; rate: number }[], cellsOf: readonly RangingNode[], logW: readonly number[], params: readonly (readonly number[])[]): Kernel[] {
  const top = Math.max(...logW);
  const order = logW.map((l, i) => ({ w: Number.isFinite(l) ? Math.exp(l - top) : 0, i })).filter((x) => x.w > 0).sort((a, b) => b.w - a.w);
  const total = order.reduce((sum, x) => sum + x.w, 0);
  const kernels: Kernel[] = [];
  let held = 0;
  for (const { w, i } of order) {
    if (held >= total * (1 - KERNEL_WEIGHT_LEFT_OUT) || kernels.length >= MAX_KERNELS) break;
    held += w;
    const cell = cellsOf[i]!;
    kernels.push({ logRho: Math.log(points[i]!.rho), rate: points[i]!.rate, sdLogRho: KERNEL_FRACTION * cell.logRangeWidth, sdRate: KERNEL_FRACTION * cell.rateWidth, weight: w, params: params[i]! });
  }
  return kernels.map((k) => ({ ...k, weight: k.weight / held }));
}

/** ln of the kernels' mixture density per d(ln rho) d(rhoDot) at a point. */
function kernelLogDensity(kernels: readonly Kernel[], rho: number, rate: number): number {
  const logRho = Math.log(rho);
  let total = 0;
  for (const k of kernels) {
    const a = (logRho - k.logRho) / k.sdLogRho, b = (rate - k.rate) / k.sdRate;
    total += (k.weight * Math.exp(-0.5 * (a * a + b * b))) / (2 * Math.PI * k.sdLogRho * k.sdRate);
  }
  return Math.log(total);
}

/** Sub-points per axis at which the population prior is averaged over a node's cell. */
const PRIOR_CELL_POINTS = 3;

/**
 * ln of the population prior's integral over a node's cell: the mean of
 * rho x prior density at PRIOR_CELL_POINTS^2 midpoints of the cell in
 * (ln rho, rhoDot) (the node's fitted angles at each), times the cell's
 * widths. The population density can change by orders of magnitude across
 * one range-rate cell (its width is a tenth of the admissible interval), so
 * its value at the centre alone would misweight the cell.
 */
function populationLogCell(ctx: Context, params: readonly number[], g: GridNode): number {
  const logs: number[] = [];
  for (let a = 0; a < PRIOR_CELL_POINTS; a++) {
    const rho = g.rho * Math.exp(((a + 0.5) / PRIOR_CELL_POINTS - 0.5) * g.logWidth);
    for (let b = 0; b < PRIOR_CELL_POINTS; b++) {
      const rate = g.rate + ((b + 0.5) / PRIOR_CELL_POINTS - 0.5) * g.rateWidth;
      logs.push(populationLogPrior(stateOf(ctx, params, rho, rate), ctx.reference.position, rho, ctx.meanV) + Math.log(rho));
    }
  }
  const top = Math.max(...logs);
  if (!Number.isFinite(top)) return -Infinity;
  const mean = logs.reduce((sum, l) => sum + Math.exp(l - top), 0) / logs.length;
  return top + Math.log(mean) + Math.log(g.logWidth * g.rateWidth);
}

function rangePriorOf(options: RangingOptions): RangePriorKind {
  const kind = options.rangePrior ?? (options.rangePriorExponent !== undefined ? 'powerLaw' : DEFAULT_RANGE_PRIOR);
  if (kind !== 'mixture' && kind !== 'population' && kind !== 'encounter' && kind !== 'powerLaw') throw new EstimationInputError('ranging.rangePrior', kind, "expected 'mixture', 'population', 'encounter' or 'powerLaw'");
  return kind;
}

type GridNode = { rho: number; rate: number; logWidth: number; rateWidth: number };

/**
 * Per range row: the range-rate that best fits the data, by Gauss-Newton with
 * range-rate as a fifth parameter started from the row's best grid node (four
 * evaluations), and its sigma from the normal matrix. A row whose +-5 sigma
 * band is narrower than a quarter of its grid span gets `rateNodes` new nodes
 * across that band, fitted from the profile's angles, instead of its old ones;
 * such a tight range-rate is what a close object's changing parallax gives.
 */
function profileRows(ctx: Context, grid: GridNode[], fitted: { params: number[][]; chiSquare: number[] }, rateNodes: number, evaluations: number): { grid: GridNode[]; fitted: { params: number[][]; chiSquare: number[] }; evaluated: number } {
  const rows = new Map<number, { best: number; lo: number; hi: number; logWidth: number }>();
  grid.forEach((g, j) => {
    const row = rows.get(g.rho) ?? { best: j, lo: Infinity, hi: -Infinity, logWidth: g.logWidth };
    if (fitted.chiSquare[j]! < fitted.chiSquare[row.best]!) row.best = j;
    row.lo = Math.min(row.lo, g.rate - g.rateWidth / 2);
    row.hi = Math.max(row.hi, g.rate + g.rateWidth / 2);
    rows.set(g.rho, row);
  });
  const entries = [...rows.entries()];
  const profile = fitNodes(
    ctx,
    entries.map(([rho, row]) => ({ rho, rate: grid[row.best]!.rate })),
    4,
    { fitRate: true, start: entries.map(([, row]) => fitted.params[row.best]!), rateBounds: entries.map(([, row]) => ({ lo: row.lo, hi: row.hi })) },
  );
  let evaluated = entries.length;
  const replaced = new Map<number, GridNode[]>();
  const starts = new Map<number, number[]>();
  entries.forEach(([rho, row], j) => {
    const sigma = profile.rateSigma[j]!;
    const centre = profile.rates[j]!;
    if (!Number.isFinite(sigma) || !(sigma > 0) || centre < row.lo || centre > row.hi) return;
    const lo = Math.max(row.lo, centre - 5 * sigma), hi = Math.min(row.hi, centre + 5 * sigma);
    if (!(hi > lo) || hi - lo > 0.25 * (row.hi - row.lo)) return;
    const rateWidth = (hi - lo) / rateNodes;
    replaced.set(rho, Array.from({ length: rateNodes }, (_, k) => ({ rho, rate: lo + (k + 0.5) * rateWidth, logWidth: row.logWidth, rateWidth })));
    starts.set(rho, profile.params[j]!);
  });
  if (replaced.size === 0) return { grid, fitted, evaluated };
  const kept = grid.map((g, j) => ({ g, j })).filter(({ g }) => !replaced.has(g.rho));
  const fresh = [...replaced.values()].flat();
  const freshFit = fitNodes(ctx, fresh, evaluations, { start: fresh.map((g) => starts.get(g.rho)!) });
  evaluated += fresh.length;
  return {
    grid: [...kept.map((k) => k.g), ...fresh],
    fitted: {
      params: [...kept.map((k) => fitted.params[k.j]!), ...freshFit.params],
      chiSquare: [...kept.map((k) => fitted.chiSquare[k.j]!), ...freshFit.chiSquare],
    },
    evaluated,
  };
}

/** Refinement continues while fewer nodes than this carry the weight (1 / sum of squared weights). */
const MIN_EFFECTIVE_NODES = 40;

/** The box holding the central 99.9 % of the weight in ln(range) and range-rate, widened by one cell. */
function concentratedBox(nodes: readonly RangingNode[]): Box {
  const weights = nodes.map((n) => n.weight);
  const logs = nodes.map((n) => Math.log(n.rangeAu));
  const rates = nodes.map((n) => n.rangeRateAuPerDay);
  const q = (values: readonly number[], p: number): number => weightedQuantile(values, weights, p);
  const logWidth = nodes[0]!.logRangeWidth;
  const heavy = nodes.filter((n) => n.weight > 1e-4);
  const rateWidth = Math.max(...heavy.map((n) => n.rateWidth));
  return {
    logLo: q(logs, 0.0005) - logWidth,
    logHi: q(logs, 0.9995) + logWidth,
    rateLo: q(rates, 0.0005) - rateWidth,
    rateHi: q(rates, 0.9995) + rateWidth,
  };
}
