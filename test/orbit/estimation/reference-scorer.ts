/**
 * Scores the short-arc estimator on reference cases. It sits beside the
 * estimator's tests, not in test/reference/, so that the reference (truths,
 * geometry, floor) imports nothing of the project at all; the truths come from
 * test/reference/cases.ts. The offsets,
 * sigma distances and the linear extrapolation are computed here with this
 * file's own formulas.
 */
import type { GeodeticLocation } from '../../../src/config/schema.js';
import type { HeliocentricState } from '../../../src/orbit/elements.js';
import { ensemblePlaces, ensemblePlacesForSites, observerGeometry } from '../../../src/orbit/ephemeris.js';
import { ttFromUtc } from '../../../src/orbit/time.js';
import { estimateObject, type ShortArcEstimate } from '../../../src/orbit/estimation/estimate.js';
import type { RangingOptions } from '../../../src/orbit/estimation/ranging.js';
import type { TrackletObservation } from '../../../src/domain/tracklet.js';
import { REFERENCE_FOLLOW_UP_SITE, REFERENCE_HORIZONS_H, REFERENCE_SURVEY_SITE, referenceTruthStates, type ReferenceCase, type ReferencePopulation } from '../../reference/cases.js';
import { ttDaysOfUtc } from '../../reference/reference-time.js';
import { linearExtrapolation, linearNoiseFloor, separationArcsec, sigmaDistance, tangentOffsetArcsec } from '../../reference/sky-geometry.js';

export { linearExtrapolation, separationArcsec, sigmaDistance, tangentOffsetArcsec };

export interface ScoredHorizon {
  readonly site: 'followUp' | 'survey';
  readonly hours: number;
  readonly errorArcsec: number;
  readonly linearErrorArcsec: number;
  /** The floor no estimator from these positions alone can beat (sky-geometry.ts), arcsec. */
  readonly floorErrorArcsec: number;
  readonly sigmaDistance: number;
  readonly majorArcsec: number;
  /** |V predicted - V true| / magSigma; null when the estimate gives no magnitude. */
  readonly magSigmas: number | null;
  readonly magErrorMag: number | null;
  readonly magSigma: number | null;
  /**
   * Distances (arcsec) from the nominal of DRAWS_PER_ROW virtual orbits taken
   * at a stride through the ensemble (a systematic sample of the posterior),
   * and how many of them lie inside its 3-sigma ellipse: what the row's figures
   * would be if the truth were a draw from the posterior itself.
   */
  readonly drawDistancesArcsec: readonly number[];
  readonly drawsInside3Sigma: number;
}

export interface ScoredCase {
  readonly id: string;
  readonly population: ReferencePopulation;
  readonly description: string;
  readonly horizons: readonly ScoredHorizon[];
  /** The truth's range at the estimate's epoch and the estimate's 5-50-95 % range, au. */
  readonly trueRangeAu: number;
  readonly rangeAu: { p5: number; p50: number; p95: number };
  /** Fraction of the virtual orbits nearer than the truth at the epoch (uniform over 0..1 for a calibrated posterior). */
  readonly rangeQuantile: number;
  readonly milliseconds: number;
  /** The importance sampling's effective sample size (null for an orbit block) and the positions flagged as outliers. */
  readonly effectiveSampleSize: number | null;
  readonly outliers: number;
}

export interface EstimatorSettings {
  readonly members?: number;
  readonly seed?: number;
  readonly ranging?: RangingOptions;
}

const asLocation = (s: { latDeg: number; lonDeg: number; heightM: number }): GeodeticLocation => ({ latDeg: s.latDeg, lonDeg: s.lonDeg, heightM: s.heightM });

export function trackletOf(c: ReferenceCase): TrackletObservation[] {
  return c.observations.map((o) => ({ t: o.t, raDeg: o.raDeg, decDeg: o.decDeg, sigmaArcsec: o.sigmaArcsec, mag: o.mag, band: o.band, observer: asLocation(o.site) }));
}

/** The truth's heliocentric state (EQJ, au, au/day) at a UTC instant (ms), from the reference's own integration, as the project's state type. */
export function truthStateAt(c: ReferenceCase, epochMs: number): HeliocentricState {
  const [s] = referenceTruthStates(c.population, Number(c.id.split('-')[1]), [ttDaysOfUtc(epochMs)]);
  return { tt: ttFromUtc(new Date(epochMs)), x: s![0]!, y: s![1]!, z: s![2]!, vx: s![3]!, vy: s![4]!, vz: s![5]! };
}

/** Chi-square of a state against the case's tracklet: its places by the project's ephemeris from the tracklet's site, offsets over the stated sigma. */
export function trackletChiSquareOf(c: ReferenceCase, state: HeliocentricState): number {
  const tracklet = trackletOf(c);
  const places = ensemblePlaces([state], tracklet[0]!.observer, tracklet.map((o) => new Date(o.t)));
  return tracklet.reduce((sum, o, k) => {
    const [e, n] = tangentOffsetArcsec(places.raDeg[k]!, places.decDeg[k]!, o.raDeg, o.decDeg);
    return sum + (e * e + n * n) / o.sigmaArcsec ** 2;
  }, 0);
}

/** A state's topocentric range (au) and range rate (au/day) from the tracklet's site at a UTC instant (ms). */
export function rangeAndRateOf(c: ReferenceCase, epochMs: number): (s: HeliocentricState) => { rho: number; rate: number } {
  const g = observerGeometry(asLocation(c.observations[0]!.site), new Date(epochMs));
  return (s) => {
    const d = [s.x - g.position.x, s.y - g.position.y, s.z - g.position.z], w = [s.vx - g.velocity.x, s.vy - g.velocity.y, s.vz - g.velocity.z];
    const rho = Math.hypot(d[0]!, d[1]!, d[2]!);
    return { rho, rate: (d[0]! * w[0]! + d[1]! * w[1]! + d[2]! * w[2]!) / rho };
  };
}

/** The truth's range at an epoch inside the tracklet, linear between the observation times. */
function trueRangeAt(c: ReferenceCase, epochMs: number): number {
  const t = c.observations.map((o) => Date.parse(o.t));
  let k = 0;
  while (k < t.length - 2 && t[k + 1]! < epochMs) k++;
  const f = (epochMs - t[k]!) / (t[k + 1]! - t[k]!);
  return c.observationRangesAu[k]! + f * (c.observationRangesAu[k + 1]! - c.observationRangesAu[k]!);
}

export function runEstimate(c: ReferenceCase, settings: EstimatorSettings = {}): ShortArcEstimate {
  return estimateObject({
    objectId: c.id,
    observations: trackletOf(c),
    now: new Date(c.lastObservationMs),
    members: settings.members ?? 1000,
    seed: settings.seed ?? 1,
    ranging: settings.ranging,
  });
}

/** Virtual orbits per row placed as if each were the truth (ScoredHorizon.drawDistancesArcsec). */
const DRAWS_PER_ROW = 20;

/** Runs the estimator on one case and scores its ephemeris from both sites at every horizon. */
export function scoreCase(c: ReferenceCase, settings: EstimatorSettings = {}): ScoredCase {
  const t0 = performance.now();
  const estimate = runEstimate(c, settings);
  const sites = [REFERENCE_FOLLOW_UP_SITE, REFERENCE_SURVEY_SITE].map(asLocation);
  const times = REFERENCE_HORIZONS_H.map((h) => new Date(c.lastObservationMs + h * 3_600_000));
  const rows = estimate.ephemerisForSites(sites, times);
  const milliseconds = performance.now() - t0;
  const floorOf = linearNoiseFloor(c);
  const stride = Math.max(1, Math.floor(estimate.virtualOrbits.length / DRAWS_PER_ROW));
  const draws = estimate.virtualOrbits.filter((_, i) => i % stride === 0).slice(0, DRAWS_PER_ROW);
  const drawPlaces = ensemblePlacesForSites(draws, sites, times);
  const horizons = c.truth.map((truth): ScoredHorizon => {
    const siteIndex = truth.site === 'followUp' ? 0 : 1;
    const timeIndex = REFERENCE_HORIZONS_H.indexOf(truth.hours as (typeof REFERENCE_HORIZONS_H)[number]);
    const row = rows[siteIndex]![timeIndex]!;
    const [east, north] = tangentOffsetArcsec(row.ra, row.dec, truth.raDeg, truth.decDeg);
    const places = drawPlaces[siteIndex]!;
    const drawOffsets = draws.map((_, j) => tangentOffsetArcsec(row.ra, row.dec, places.raDeg[timeIndex * draws.length + j]!, places.decDeg[timeIndex * draws.length + j]!));
    const linear = linearExtrapolation(c, truth.utcMs);
    const magError = row.mag === null ? null : Math.abs(row.mag - truth.vMag);
    return {
      site: truth.site,
      hours: truth.hours,
      errorArcsec: separationArcsec(row.ra, row.dec, truth.raDeg, truth.decDeg),
      linearErrorArcsec: separationArcsec(linear.raDeg, linear.decDeg, truth.raDeg, truth.decDeg),
      floorErrorArcsec: floorOf(truth),
      sigmaDistance: row.unc ? sigmaDistance(row.unc, east, north) : Infinity,
      majorArcsec: row.unc?.major ?? Infinity,
      magSigmas: magError === null || row.magSigma === null ? null : magError / Math.max(row.magSigma, 1e-6),
      magErrorMag: magError,
      magSigma: row.magSigma,
      drawDistancesArcsec: drawOffsets.map(([e, n]) => Math.hypot(e, n)),
      drawsInside3Sigma: row.unc ? drawOffsets.filter(([e, n]) => sigmaDistance(row.unc!, e, n) <= 3).length : 0,
    };
  });
  const epochMs = estimate.attributable?.epochMs ?? c.meanEpochMs;
  const trueRange = trueRangeAt(c, epochMs);
  return {
    id: c.id,
    population: c.population,
    description: c.description,
    horizons,
    trueRangeAu: trueRange,
    rangeAu: estimate.summary.rangeAu,
    rangeQuantile: estimate.memberRangeAu.filter((r) => r < trueRange).length / estimate.memberRangeAu.length,
    milliseconds,
    effectiveSampleSize: estimate.ranging?.effectiveSampleSize ?? null,
    outliers: estimate.summary.residuals.filter((r) => r.outlier).length,
  };
}

const quantile = (values: readonly number[], p: number): number => {
  const s = [...values].sort((a, b) => a - b);
  if (s.length === 0) return Number.NaN;
  const x = p * (s.length - 1);
  const i = Math.floor(x);
  return s[i]! + (i + 1 < s.length ? (x - i) * (s[i + 1]! - s[i]!) : 0);
};
export const median = (values: readonly number[]): number => quantile(values, 0.5);

/** The bar's figures for one population at one horizon (both sites pooled). */
export interface HorizonFigures {
  readonly hours: number;
  readonly cases: number;
  readonly inside3Sigma: number;
  readonly medianErrorArcsec: number;
  readonly p90ErrorArcsec: number;
  readonly medianLinearArcsec: number;
  readonly medianFloorArcsec: number;
  readonly medianMajorArcsec: number;
  readonly majorOverError: number;
  readonly magInside3Sigma: number;
  /** Median 1-sigma major over the median distance of the posterior's own draws: the ratio if the truth were such a draw (a calibrated posterior). */
  readonly majorOverDrawDistance: number;
  /** Fraction of the posterior's own draws inside the 3-sigma ellipse (the ellipse's scale: 98.89 % by construction, less its sampling noise). */
  readonly drawsInside3Sigma: number;
}

export function horizonFigures(scored: readonly ScoredCase[], hours: number): HorizonFigures {
  const rows = scored.flatMap((s) => s.horizons.filter((h) => h.hours === hours));
  const err = rows.map((r) => r.errorArcsec);
  const major = rows.map((r) => r.majorArcsec);
  const mags = rows.filter((r) => r.magSigmas !== null);
  return {
    hours,
    cases: rows.length,
    inside3Sigma: rows.filter((r) => r.sigmaDistance <= 3).length / rows.length,
    medianErrorArcsec: median(err),
    p90ErrorArcsec: quantile(err, 0.9),
    medianLinearArcsec: median(rows.map((r) => r.linearErrorArcsec)),
    medianFloorArcsec: median(rows.map((r) => r.floorErrorArcsec)),
    medianMajorArcsec: median(major),
    majorOverError: median(major) / median(err),
    magInside3Sigma: mags.length === 0 ? Number.NaN : mags.filter((r) => r.magSigmas! <= 3).length / mags.length,
    majorOverDrawDistance: median(major) / median(rows.flatMap((r) => r.drawDistancesArcsec)),
    drawsInside3Sigma: rows.reduce((n, r) => n + r.drawsInside3Sigma, 0) / rows.reduce((n, r) => n + r.drawDistancesArcsec.length, 0),
  };
}

/** Fraction of cases whose true range lies inside the estimate's 5-95 % interval. */
export function rangeCoverage(scored: readonly ScoredCase[]): number {
  return scored.filter((s) => s.rangeAu.p5 <= s.trueRangeAu && s.trueRangeAu <= s.rangeAu.p95).length / scored.length;
}

/** The bar of the short-arc estimator, per population and horizon (docs/accuracy.md). */
export const ESTIMATOR_BAR = {
  inside3Sigma: 0.95,
  rangeCoverage: 0.9,
  maxMajorOverError: 3,
  maxNominalOverLinearAt24h: 1 / 3,
  magInside3Sigma: 0.95,
} as const;
