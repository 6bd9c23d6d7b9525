import { Body, HelioState, MakeTime } from 'astronomy-engine';
import { ARCSEC_PER_RAD, GM_EARTH_AU3_PER_DAY2, GM_MOON_AU3_PER_DAY2, GM_SUN_AU3_PER_DAY2, LIGHT_AU_PER_DAY, SECONDS_PER_DAY } from '../constants.js';
import type { HeliocentricState } from '../elements.js';
import { astrometricPlace, observerGeometry, type ObserverGeometry } from '../ephemeris.js';
import { streamEnsemble } from '../propagate.js';
import { ttFromUtc } from '../time.js';
import type { Attributable } from './attributable.js';
import { EstimationFailedError } from './errors.js';
import { cholesky } from './linalg.js';
import type { PreparedObservation } from './observations.js';
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
 * Prior (documented in docs/accuracy.md): density in (rho, rhoDot) proportional
 * to rho^k, flat in range-rate inside the admissible region; k = -1 (flat in
 * log range) by default. Grid refinement: while the posterior weight is
 * concentrated (99.9 % inside less than half the current span of log range,
 * or fewer than 40 nodes effectively carrying it), a new grid covers that
 * span, each row's range-rates following the weighted range-rates of its
 * neighbours in the previous pass; at most five passes.
 */

/** Smallest range on the grid, au (45 000 km, about a ninth of the Moon's distance). */
export const RANGE_MIN_AU = 3e-4;
/** Largest range on the grid, au (beyond the outer main belt seen from the Earth). */
export const RANGE_MAX_AU = 6;

export interface RangingOptions {
  /** Exponent k of the range prior rho^k; default -1 (flat in log range). */
  readonly rangePriorExponent?: number;
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
  /** Normalised posterior weight (sums to 1 over the pass). */
  weight: number;
}

export interface RangingResult {
  readonly epochTt: number;
  readonly nodes: readonly RangingNode[];
  readonly passes: number;
  readonly minChiSquare: number;
  readonly evaluatedNodes: number;
  /** Builds the heliocentric state (EQJ, au, au/day, at epochTt) of a node's parameters. */
  readonly stateOf: (params: readonly number[], rangeAu: number, rangeRateAuPerDay: number) => HeliocentricState;
}

/** A virtual orbit drawn from the ranging posterior. */
export interface VirtualOrbit {
  readonly state: HeliocentricState;
  readonly rangeAu: number;
  readonly rangeRateAuPerDay: number;
  readonly node: number;
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
}

const dot = (a: Vec3, b: Vec3): number => a[0] * b[0] + a[1] * b[1] + a[2] * b[2];
const v3 = (p: { x: number; y: number; z: number }): Vec3 => [p.x, p.y, p.z];

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
 * ensemble propagation per Gauss-Newton evaluation. Returns params and chi^2 per node.
 */
function fitNodes(ctx: Context, nodes: readonly { rho: number; rate: number }[], evaluations: number): { params: number[][]; chiSquare: number[] } {
  const [xiDot, etaDot] = paramsRate(ctx);
  const params = nodes.map(() => [0, 0, xiDot, etaDot]);
  const chiSquare = nodes.map(() => Infinity);
  const nObs = ctx.observations.length;
  const [n00, n01, n11] = ctx.normalInverse;
  for (let evaluation = 0; evaluation < evaluations; evaluation++) {
    const states = nodes.map((node, j) => stateOf(ctx, params[j]!, node.rho, node.rate));
    const resXi = new Float64Array(nodes.length * nObs);
    const resEta = new Float64Array(nodes.length * nObs);
    streamEnsemble(
      states,
      ctx.timesTt,
      (k, pos, vel) => {
        const geometry = ctx.geometries[k]!;
        for (let m = 0; m < nodes.length; m++) {
          const place = astrometricPlace(
            { x: pos[3 * m]!, y: pos[3 * m + 1]!, z: pos[3 * m + 2]! },
            { x: vel[3 * m]!, y: vel[3 * m + 1]!, z: vel[3 * m + 2]! },
            geometry,
          );
          const p = project(ctx.attributable.frame, unitFromRaDec((place.raDeg * Math.PI) / 180, (place.decDeg * Math.PI) / 180));
          resXi[m * nObs + k] = ctx.observedXi[k]! - p[0];
          resEta[m * nObs + k] = ctx.observedEta[k]! - p[1];
        }
      },
      { stepFraction: 0.2, maxStepDays: 0.05 },
    );
    for (let m = 0; m < nodes.length; m++) {
      let chi = 0, bx0 = 0, bx1 = 0, by0 = 0, by1 = 0;
      for (let k = 0; k < nObs; k++) {
        const w = ctx.weights[k]!, dt = ctx.dtDays[k]!;
        const rx = resXi[m * nObs + k]!, ry = resEta[m * nObs + k]!;
        chi += w * (rx * rx + ry * ry);
        bx0 += w * rx; bx1 += w * rx * dt; by0 += w * ry; by1 += w * ry * dt;
      }
      chiSquare[m] = chi;
      if (evaluation < evaluations - 1) {
        const p = params[m]!;
        p[0]! += n00 * bx0 + n01 * bx1;
        p[2]! += n01 * bx0 + n11 * bx1;
        p[1]! += n00 * by0 + n01 * by1;
        p[3]! += n01 * by0 + n11 * by1;
      }
    }
  }
  return { params, chiSquare };
}

interface Box {
  logLo: number;
  logHi: number;
  rateLo: number;
  rateHi: number;
}

/** Runs the ranging passes for a tracklet whose attributable is given. */
export function systematicRanging(observations: readonly PreparedObservation[], attributable: Attributable, options: RangingOptions = {}): RangingResult {
  const ctx = makeContext(observations, attributable);
  const k = options.rangePriorExponent ?? -1;
  const rangeNodes = options.rangeNodes ?? 36;
  const rateNodes = options.rateNodes ?? 10;
  const maxPasses = options.passes ?? 5;
  let box: Box = { logLo: Math.log(RANGE_MIN_AU), logHi: Math.log(RANGE_MAX_AU), rateLo: -Infinity, rateHi: Infinity };
  let nodes: RangingNode[] = [];
  let evaluated = 0;
  let pass = 0;
  let minChi = Infinity;
  while (pass < maxPasses) {
    pass++;
    const previous = nodes;
    const logWidth = (box.logHi - box.logLo) / rangeNodes;
    const grid: GridNode[] = [];
    for (let i = 0; i < rangeNodes; i++) {
      const rho = Math.exp(box.logLo + (i + 0.5) * logWidth);
      const interval = admissibleRates(ctx, rho);
      if (!interval) continue;
      // After the first pass each row follows the weighted range-rates of its neighbours in the last pass (a tilted ridge stays covered).
      const band = previous.length > 0 ? rateBand(previous, Math.log(rho)) : { lo: -Infinity, hi: Infinity };
      if (!band) continue;
      const lo = Math.max(interval.lo, band.lo), hi = Math.min(interval.hi, band.hi);
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
    let fitted = fitNodes(ctx, grid, evaluations);
    evaluated += grid.length;
    // Rows where the data pin the range-rate more tightly than the grid resolves are re-gridded around their minimum.
    const profiled = profileRows(ctx, grid, fitted, rateNodes, evaluations);
    evaluated += profiled.evaluated;
    if (profiled.grid !== grid) {
      grid.splice(0, grid.length, ...profiled.grid);
      fitted = profiled.fitted;
    }
    const passMin = Math.min(...fitted.chiSquare);
    const candidate: RangingNode[] = grid.map((g, j) => ({
      rangeAu: g.rho,
      rangeRateAuPerDay: g.rate,
      logRangeWidth: g.logWidth,
      rateWidth: g.rateWidth,
      params: fitted.params[j]!,
      chiSquare: fitted.chiSquare[j]!,
      // Density rho^k per d(rho) is rho^(k+1) per d(ln rho).
      weight: Math.exp(-(fitted.chiSquare[j]! - passMin) / 2) * Math.pow(g.rho, k + 1) * g.logWidth * g.rateWidth,
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
    minChi = passMin;
    const effective = 1 / nodes.reduce((s, n) => s + n.weight * n.weight, 0);
    const next = concentratedBox(nodes);
    const shrinksRange = next.logHi - next.logLo < 0.5 * (box.logHi - box.logLo);
    if (!shrinksRange && effective > MIN_EFFECTIVE_NODES) break;
    box = { ...next, rateLo: -Infinity, rateHi: Infinity };
  }
  return {
    epochTt: ctx.epochTt,
    nodes,
    passes: pass,
    minChiSquare: minChi,
    evaluatedNodes: evaluated,
    stateOf: (params, rho, rate) => stateOf(ctx, params, rho, rate),
  };
}

type GridNode = { rho: number; rate: number; logWidth: number; rateWidth: number };

/**
 * Per range row: the chi-square minimum over range-rate by three rounds of
 * parabolic interpolation through the row's three best points (Brent 1973,
 * Algorithms for Minimization without Derivatives, ch. 5, without the
 * golden-section fallback), all rows evaluated together; sigma from the
 * parabola's curvature (delta chi^2 = 1). A row whose +-5 sigma band is
 * narrower than a quarter of its grid span gets `rateNodes` new nodes across
 * that band instead of its old ones.
 */
function profileRows(ctx: Context, grid: GridNode[], fitted: { params: number[][]; chiSquare: number[] }, rateNodes: number, evaluations: number): { grid: GridNode[]; fitted: { params: number[][]; chiSquare: number[] }; evaluated: number } {
  const rows = new Map<number, { points: { x: number; chi: number }[]; lo: number; hi: number; logWidth: number }>();
  grid.forEach((g, j) => {
    const row = rows.get(g.rho) ?? { points: [], lo: Infinity, hi: -Infinity, logWidth: g.logWidth };
    row.points.push({ x: g.rate, chi: fitted.chiSquare[j]! });
    row.lo = Math.min(row.lo, g.rate - g.rateWidth / 2);
    row.hi = Math.max(row.hi, g.rate + g.rateWidth / 2);
    rows.set(g.rho, row);
  });
  let evaluated = 0;
  const parabola = (pts: { x: number; chi: number }[]): { a: number; vertex: number } | null => {
    const [p, q, r] = [...pts].sort((u, v) => u.chi - v.chi).slice(0, 3);
    if (!p || !q || !r || p.x === q.x || q.x === r.x || p.x === r.x) return null;
    // Divided differences of chi(x) = a x^2 + b x + c.
    const d1 = (q.chi - p.chi) / (q.x - p.x), d2 = (r.chi - q.chi) / (r.x - q.x);
    const a = (d2 - d1) / (r.x - p.x);
    const b = d1 - a * (p.x + q.x);
    return a > 0 ? { a, vertex: -b / (2 * a) } : null;
  };
  for (let round = 0; round < 3; round++) {
    const trial: { rho: number; rate: number }[] = [];
    for (const [rho, row] of rows) {
      if (row.points.length < 3) continue;
      const fit = parabola(row.points);
      if (!fit) continue;
      const x = Math.min(Math.max(fit.vertex, row.lo), row.hi);
      if (row.points.some((pt) => Math.abs(pt.x - x) < 1e-12 * (row.hi - row.lo))) continue;
      trial.push({ rho, rate: x });
    }
    if (trial.length === 0) break;
    const result = fitNodes(ctx, trial, evaluations);
    evaluated += trial.length;
    trial.forEach((t, j) => rows.get(t.rho)!.points.push({ x: t.rate, chi: result.chiSquare[j]! }));
  }
  const replaced = new Map<number, GridNode[]>();
  for (const [rho, row] of rows) {
    const fit = parabola(row.points);
    if (!fit) continue;
    const sigma = 1 / Math.sqrt(fit.a);
    const best = row.points.reduce((m, pt) => (pt.chi < m.chi ? pt : m));
    const lo = Math.max(row.lo, best.x - 5 * sigma), hi = Math.min(row.hi, best.x + 5 * sigma);
    if (!(hi > lo) || hi - lo > 0.25 * (row.hi - row.lo)) continue;
    const rateWidth = (hi - lo) / rateNodes;
    replaced.set(rho, Array.from({ length: rateNodes }, (_, j) => ({ rho, rate: lo + (j + 0.5) * rateWidth, logWidth: row.logWidth, rateWidth })));
  }
  if (replaced.size === 0) return { grid, fitted, evaluated };
  const kept = grid.map((g, j) => ({ g, j })).filter(({ g }) => !replaced.has(g.rho));
  const fresh = [...replaced.values()].flat();
  const freshFit = fitNodes(ctx, fresh, evaluations);
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

/** Range-rate band (au/day) of the weighted last-pass nodes within one row of ln(range) `logRho`, widened by a cell; null when none. */
function rateBand(previous: readonly RangingNode[], logRho: number): { lo: number; hi: number } | null {
  let lo = Infinity, hi = -Infinity;
  const maxWeight = previous.reduce((m, n) => Math.max(m, n.weight), 0);
  for (const n of previous) {
    if (n.weight < 1e-6 * maxWeight) continue;
    if (Math.abs(Math.log(n.rangeAu) - logRho) > 1.5 * n.logRangeWidth) continue;
    lo = Math.min(lo, n.rangeRateAuPerDay - n.rateWidth);
    hi = Math.max(hi, n.rangeRateAuPerDay + n.rateWidth);
  }
  return hi > lo ? { lo, hi } : null;
}

/** The box holding the central 99.9 % of the weight in ln(range) and range-rate, widened by one cell. */
function concentratedBox(nodes: readonly RangingNode[]): Box {
  const q = (values: { x: number; w: number }[], p: number): number => {
    values.sort((a, b) => a.x - b.x);
    let c = 0;
    for (const v of values) {
      c += v.w;
      if (c >= p) return v.x;
    }
    return values[values.length - 1]!.x;
  };
  const logs = nodes.map((n) => ({ x: Math.log(n.rangeAu), w: n.weight }));
  const rates = nodes.map((n) => ({ x: n.rangeRateAuPerDay, w: n.weight }));
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

/**
 * Draws `count` virtual orbits from the ranging posterior: nodes by
 * systematic resampling of their weights (Kitagawa 1996, J. Comput. Graph.
 * Stat. 5, 1), a uniform position inside the node's cell in ln(range) and
 * range-rate, and the angular parameters from the node's fit plus Gaussian
 * noise with the attributable's covariance.
 */
export function drawVirtualOrbits(ranging: RangingResult, covariance: readonly (readonly number[])[], count: number, random: RandomSource): VirtualOrbit[] {
  const chol = cholesky(covariance);
  const nodes = ranging.nodes;
  const out: VirtualOrbit[] = [];
  const start = random.uniform() / count;
  let cumulative = 0;
  let j = 0;
  for (let m = 0; m < count; m++) {
    const target = start + m / count;
    while (j < nodes.length - 1 && cumulative + nodes[j]!.weight < target) {
      cumulative += nodes[j]!.weight;
      j++;
    }
    const node = nodes[j]!;
    const rho = node.rangeAu * Math.exp((random.uniform() - 0.5) * node.logRangeWidth);
    const rate = node.rangeRateAuPerDay + (random.uniform() - 0.5) * node.rateWidth;
    const z = [random.normal(), random.normal(), random.normal(), random.normal()];
    const params = node.params.map((p, a) => p + chol[a]!.reduce((s, l, b) => s + l * z[b]!, 0));
    out.push({ state: ranging.stateOf(params, rho, rate), rangeAu: rho, rangeRateAuPerDay: rate, node: j });
  }
  // Systematic resampling visits nodes in grid order; shuffle so any prefix is a fair sample.
  for (let m = out.length - 1; m > 0; m--) {
    const s = Math.floor(random.uniform() * (m + 1));
    [out[m], out[s]] = [out[s]!, out[m]!];
  }
  return out;
}
