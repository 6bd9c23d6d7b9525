import type { Site } from '../config/schema.js';
import { ccdNoiseBudget, exposureForSnr, noiseRegime, snrForExposure, type CcdSignal } from './ccd.js';
import { EXPOSURES_PER_SHORTEST_PERIOD, lightCurveCadence, spinPeriodRange, type SpinRange } from './cadence.js';
import {
  checkConditions,
  PlanConfigError,
  type ExposureLimit,
  type ExposureLimitKind,
  type ExposureStep,
  type NotFeasible,
  type ObservingConditions,
} from './conditions.js';
import type { RequestKind } from '../domain/request-kind.js';
import { requireInRange, requireNonNegative, requirePositive } from './errors.js';
import { imagingLimitingMagnitude, imagingLimits, imagingSetup, type ImagingOptions } from './imaging.js';
import {
  requireSpectrograph,
  slitResidenceS,
  spectrumLimitingMagnitude,
  spectrumLimits,
  spectrumSetup,
  type SpectrumOptions,
} from './spectroscopy.js';

/**
 * Exposure plans per request kind. Each plan function is pure: (site config,
 * observing conditions, options) -> a plan, or NotFeasible with the reason in
 * words and numbers. Every step's exposure respects every limit the step lists.
 */

export interface PlanOptions extends ImagingOptions, SpectrumOptions {
  /** SNR to reach per frame (photometry), per filter (colours) or per resolution element (spectrum). */
  targetSnr?: number;
  /** Light-curve frames below this SNR are not worth taking; default 10 (0.1 mag per point). */
  minUsefulSnr?: number;
  /** Shortest exposure the shutter allows, s; default 1 (common practice for mechanical shutters). */
  minExposureS?: number;
  /** Most exposures one step may stack; default 60. */
  maxCount?: number;
  /** Light-curve filter; default V when configured, else the first filter. */
  filter?: string;
  /** Colour filters in order; default g, r, i, z (those configured). */
  colourFilters?: string[];
  /** Slit for a spectrum, arcsec; default the configured slit with the shortest total time. */
  slitArcsec?: number;
  /** Time available, s. Light curve: caps the sequence (default 2 x longest period, or 1 h without a size); colours and spectrum: the plan must fit (default 1 h). */
  windowS?: number;
  /** Per-frame overhead beyond readout (file write, guiding settle), s; default 5 (planning assumption). */
  frameOverheadS?: number;
  /** Time to change filters, s; default 10 (planning assumption). */
  filterChangeS?: number;
}

/** Default SNR targets per kind: 0.05 mag per light-curve point; 0.05 mag colours from two bands (about 0.035 each); a low-resolution taxonomy spectrum (common practice). */
export const DEFAULT_TARGET_SNR: Readonly<Record<RequestKind, number>> = Object.freeze({ photometry: 20, colours: 30, spectrum: 20 });

/** Window assumed when none is given and no spin range sets it, s. */
export const DEFAULT_WINDOW_S = 3600;

export interface PhotometryPlan {
  feasible: true;
  kind: 'photometry';
  steps: [ExposureStep];
  /** Plausible spin range, when a diameter range was given. */
  spin: SpinRange | null;
  cadenceS: number;
  sequenceS: number;
  totalS: number;
  /** Band magnitude reaching the target SNR in one frame of the planned exposure. */
  limitingMagnitude: number;
  notes: string[];
}

export interface ColoursPlan {
  feasible: true;
  kind: 'colours';
  /** One step per filter, in the order of the first half-cycle. */
  steps: ExposureStep[];
  /** One mirrored cycle (e.g. g r i z z i r g): every filter gets the same mean epoch, cancelling a linear brightness trend from rotation. */
  cycle: string[];
  cycles: number;
  totalS: number;
  notes: string[];
}

export interface SpectrumPlan {
  feasible: true;
  kind: 'spectrum';
  steps: [ExposureStep];
  slitArcsec: number;
  slitFraction: number;
  resolutionNm: number;
  resolvingPower: number;
  referenceWavelengthNm: number;
  /** Tracking error carries the object from slit centre to edge in this time, s (null when the rate is exact). */
  recentreEveryS: number | null;
  recentres: number;
  acquisitionS: number;
  totalS: number;
  limitingMagnitude: {
    /** V reaching the target SNR in the longest single exposure allowed. */
    singleExposureV: number;
    /** V reaching it in the whole time available. */
    windowV: number;
    windowS: number;
  };
  notes: string[];
}

export type ExposurePlan = PhotometryPlan | ColoursPlan | SpectrumPlan;
export type PlanResult<P extends ExposurePlan = ExposurePlan> = P | NotFeasible;

const fmt = (x: number, digits = 3): string => Number(x.toPrecision(digits)).toString();

interface Solved {
  exposureS: number;
  count: number;
  snrPerExposure: number;
  snr: number;
  boundBy: ExposureLimitKind | null;
  limitingFactor: string;
  regime: ExposureStep['noiseRegime'];
}

interface Unsolved {
  reason: string;
  figures: Record<string, number>;
}

/** Rounds up to 0.1 s, never past `capS`. */
function roundExposure(t: number, capS: number): number {
  return Math.min(capS, Math.ceil(t * 10 - 1e-9) / 10);
}

/**
 * Exposure and count for one step: the closed-form exposure for the SNR if it
 * fits under the shortest cap; otherwise the cap binds and, when stacking is
 * allowed, N = ceil((SNR_target / SNR(cap))^2) exposures each of the length that
 * makes their sum reach the target (exposureForSnr with count N).
 */
function solveStep(signal: CcdSignal, limits: ExposureLimit[], targetSnr: number, minExposureS: number, stack: { allowed: boolean; maxCount: number }): Solved | Unsolved {
  const binding = limits[0];
  const capS = binding === undefined ? Number.POSITIVE_INFINITY : binding.maxExposureS;
  if (binding !== undefined && capS < minExposureS) {
    return {
      reason: `${binding.kind} allows at most ${fmt(capS)} s (${binding.detail}), below the shortest exposure ${fmt(minExposureS)} s`,
      figures: { maxExposureS: capS, minExposureS },
    };
  }
  const single = exposureForSnr(signal, targetSnr);
  if (single <= capS || binding === undefined) {
    const exposureS = roundExposure(Math.max(single, minExposureS), capS);
    const budget = ccdNoiseBudget(signal, exposureS);
    const regime = noiseRegime(budget);
    const raised = single < minExposureS ? `; the shortest exposure ${fmt(minExposureS)} s already exceeds the target SNR` : '';
    return { exposureS, count: 1, snrPerExposure: budget.snr, snr: budget.snr, boundBy: null, limitingFactor: `${regime}${raised}`, regime };
  }
  const snrAtCap = snrForExposure(signal, capS);
  const regimeAtCap = noiseRegime(ccdNoiseBudget(signal, capS));
  const capText = `${binding.kind} caps exposures at ${fmt(capS)} s (${binding.detail})`;
  if (!stack.allowed) {
    const exposureS = roundExposure(capS, capS);
    const snr = snrForExposure(signal, exposureS);
    return {
      exposureS,
      count: 1,
      snrPerExposure: snr,
      snr,
      boundBy: binding.kind,
      limitingFactor: `${capText}; SNR ${fmt(snr)} instead of ${fmt(targetSnr)}; ${regimeAtCap}`,
      regime: regimeAtCap,
    };
  }
  const count = Math.max(2, Math.ceil((targetSnr / snrAtCap) ** 2 - 1e-9));
  if (count > stack.maxCount) {
    return {
      reason: `${capText}; reaching SNR ${fmt(targetSnr)} would take ${count} exposures, more than the ${stack.maxCount} allowed (SNR ${fmt(snrAtCap)} per exposure)`,
      figures: { maxExposureS: capS, snrPerExposure: snrAtCap, countNeeded: count, maxCount: stack.maxCount },
    };
  }
  const exposureS = roundExposure(Math.max(exposureForSnr(signal, targetSnr, count), minExposureS), capS);
  const snrPerExposure = snrForExposure(signal, exposureS);
  const regime = noiseRegime(ccdNoiseBudget(signal, exposureS));
  return {
    exposureS,
    count,
    snrPerExposure,
    snr: Math.sqrt(count) * snrPerExposure,
    boundBy: binding.kind,
    limitingFactor: `${capText}; ${count} exposures stacked; ${regime}`,
    regime,
  };
}

function isUnsolved(s: Solved | Unsolved): s is Unsolved {
  return 'reason' in s;
}

function toStep(s: Solved, limits: ExposureLimit[], where: { filter: string } | { slitArcsec: number }): ExposureStep {
  return {
    ...where,
    exposureS: s.exposureS,
    count: s.count,
    snrPerExposure: s.snrPerExposure,
    snr: s.snr,
    noiseRegime: s.regime,
    boundBy: s.boundBy,
    limitingFactor: s.limitingFactor,
    limits,
  };
}

function notFeasible(kind: RequestKind, reason: string, figures: Record<string, number>): NotFeasible {
  return { feasible: false, kind, reason, figures };
}

interface CommonOptions {
  targetSnr: number;
  minExposureS: number;
  maxCount: number;
  frameOverheadS: number;
  filterChangeS: number;
}

function commonOptions(kind: RequestKind, options: PlanOptions, site: Site): CommonOptions {
  const settings = site.exposure;
  const targetSnr = options.targetSnr ?? settings?.targetSnr?.[kind] ?? DEFAULT_TARGET_SNR[kind];
  requirePositive('targetSnr', targetSnr);
  const minExposureS = options.minExposureS ?? 1;
  requirePositive('minExposureS', minExposureS);
  const maxCount = options.maxCount ?? 60;
  requireInRange('maxCount', maxCount, 1, 10_000);
  const frameOverheadS = options.frameOverheadS ?? settings?.frameOverheadS ?? 5;
  requireNonNegative('frameOverheadS', frameOverheadS);
  const filterChangeS = options.filterChangeS ?? settings?.filterChangeS ?? 10;
  requireNonNegative('filterChangeS', filterChangeS);
  if (options.windowS !== undefined) requirePositive('windowS', options.windowS);
  return { targetSnr, minExposureS, maxCount: Math.floor(maxCount), frameOverheadS, filterChangeS };
}

/**
 * Light-curve plan: one filter, single frames (never stacked, so the curve keeps
 * its time resolution), each capped by the imaging limits and by a tenth of the
 * shortest plausible spin period; cadence and sequence length from
 * lightCurveCadence. Not feasible when a frame cannot reach minUsefulSnr.
 */
export function photometryPlan(site: Site, conditions: ObservingConditions, options: PlanOptions = {}): PlanResult<PhotometryPlan> {
  checkConditions(conditions);
  const common = commonOptions('photometry', options, site);
  const minUsefulSnr = options.minUsefulSnr ?? 10;
  requirePositive('minUsefulSnr', minUsefulSnr);
  const filterName = options.filter ?? (site.imager.filters.some((f) => f.name === 'V') ? 'V' : (site.imager.filters[0]?.name ?? 'V'));
  const setup = imagingSetup(site, filterName, conditions, options);
  const limits = imagingLimits(site, setup, conditions, options);
  const notes: string[] = [];
  let spin: SpinRange | null = null;
  if (conditions.diameterRangeM !== undefined) {
    spin = spinPeriodRange(conditions.diameterRangeM.minM, conditions.diameterRangeM.maxM);
    limits.push({
      kind: 'rotation sampling',
      maxExposureS: spin.minPeriodS / EXPOSURES_PER_SHORTEST_PERIOD,
      detail: `exposure at most a tenth of the shortest plausible period ${fmt(spin.minPeriodS)} s (${spin.basis})`,
    });
    limits.sort((a, b) => a.maxExposureS - b.maxExposureS);
  } else {
    notes.push('no diameter range given: exposure not limited by rotation');
  }
  const solved = solveStep(setup.signal, limits, common.targetSnr, common.minExposureS, { allowed: false, maxCount: 1 });
  if (isUnsolved(solved)) return notFeasible('photometry', solved.reason, solved.figures);
  if (solved.snr < minUsefulSnr) {
    return notFeasible('photometry', `${solved.limitingFactor}; SNR ${fmt(solved.snr)} per frame is below the useful minimum ${fmt(minUsefulSnr)}`, {
      exposureS: solved.exposureS,
      snr: solved.snr,
      minUsefulSnr,
      bandMag: setup.bandMag,
    });
  }
  const windowS = options.windowS ?? (spin === null ? DEFAULT_WINDOW_S : 2 * spin.maxPeriodS);
  const cadenceSpin: SpinRange = spin ?? { minPeriodS: Number.POSITIVE_INFINITY, maxPeriodS: windowS / 2, basis: 'no size' };
  const cadence = lightCurveCadence(cadenceSpin, solved.exposureS, site.imager.readoutS, common.frameOverheadS, windowS);
  const step = toStep({ ...solved, count: cadence.count }, limits, { filter: filterName });
  return {
    feasible: true,
    kind: 'photometry',
    steps: [step],
    spin,
    cadenceS: cadence.cadenceS,
    sequenceS: cadence.sequenceS,
    totalS: cadence.count * cadence.cadenceS,
    limitingMagnitude: imagingLimitingMagnitude(setup, conditions.airmass, common.targetSnr, solved.exposureS),
    notes,
  };
}

/** Default colour sequence. */
export const DEFAULT_COLOUR_FILTERS: readonly string[] = Object.freeze(['g', 'r', 'i', 'z']);

/**
 * Colours plan: each filter reaches the target SNR from its stacked exposures;
 * the filters run in mirrored cycles (g r i z z i r g) so every filter has the
 * same mean epoch and a linear rotational trend cancels. Cycles = the largest
 * ceil(N_f / 2) over the filters, N_f the exposures filter f needs under its caps;
 * every filter then takes 2 x cycles exposures, each as long as that count needs.
 */
export function coloursPlan(site: Site, conditions: ObservingConditions, options: PlanOptions = {}): PlanResult<ColoursPlan> {
  checkConditions(conditions);
  const common = commonOptions('colours', options, site);
  const configured = site.imager.filters.map((f) => f.name);
  let names: string[];
  if (options.colourFilters !== undefined) {
    const missing = options.colourFilters.filter((n) => !configured.includes(n));
    if (missing.length > 0) throw new PlanConfigError(`colour filters not on this imager: ${missing.join(', ')}; configured: ${configured.join(', ')}`);
    names = [...options.colourFilters];
  } else {
    names = DEFAULT_COLOUR_FILTERS.filter((n) => configured.includes(n));
    if (names.length < 2) names = configured;
  }
  if (names.length < 2) return notFeasible('colours', `colours need at least two filters; this imager has ${configured.length}`, { filters: configured.length });

  const perFilter: { name: string; signal: CcdSignal; limits: ExposureLimit[]; needed: number }[] = [];
  for (const name of names) {
    const setup = imagingSetup(site, name, conditions, options);
    const limits = imagingLimits(site, setup, conditions, options);
    const solved = solveStep(setup.signal, limits, common.targetSnr, common.minExposureS, { allowed: true, maxCount: common.maxCount });
    if (isUnsolved(solved)) return notFeasible('colours', `filter ${name}: ${solved.reason}`, solved.figures);
    perFilter.push({ name, signal: setup.signal, limits, needed: solved.count });
  }
  const cycles = Math.max(1, ...perFilter.map((f) => Math.ceil(f.needed / 2)));
  const count = 2 * cycles;
  if (count > common.maxCount) {
    return notFeasible('colours', `interleaving needs ${count} exposures per filter, more than the ${common.maxCount} allowed`, { count, maxCount: common.maxCount });
  }
  const steps: ExposureStep[] = perFilter.map((f) => {
    const capS = f.limits[0]?.maxExposureS ?? Number.POSITIVE_INFINITY;
    const exposureS = roundExposure(Math.max(exposureForSnr(f.signal, common.targetSnr, count), common.minExposureS), capS);
    const budget = ccdNoiseBudget(f.signal, exposureS);
    const regime = noiseRegime(budget);
    const bound = f.needed > 1 ? f.limits[0] : undefined;
    const limitingFactor =
      bound !== undefined
        ? `${bound.kind} caps exposures at ${fmt(bound.maxExposureS)} s (${bound.detail}); ${count} exposures stacked; ${regime}`
        : `${regime}; split into ${count} exposures to interleave the filters`;
    return {
      filter: f.name,
      exposureS,
      count,
      snrPerExposure: budget.snr,
      snr: Math.sqrt(count) * budget.snr,
      noiseRegime: regime,
      boundBy: bound?.kind ?? null,
      limitingFactor,
      limits: f.limits,
    };
  });
  const cycle = [...names, ...[...names].reverse()];
  const readoutS = site.imager.readoutS;
  const exposing = steps.reduce((sum, s) => sum + s.count * (s.exposureS + readoutS + common.frameOverheadS), 0);
  const filterChanges = cycles * 2 * (names.length - 1);
  const totalS = exposing + filterChanges * common.filterChangeS;
  const windowS = options.windowS ?? DEFAULT_WINDOW_S;
  if (totalS > windowS) {
    return notFeasible('colours', `the sequence takes ${fmt(totalS)} s, longer than the ${fmt(windowS)} s available`, { totalS, windowS });
  }
  return { feasible: true, kind: 'colours', steps, cycle, cycles, totalS, notes: [] };
}

/**
 * Spectrum plan: for each configured slit (or the one asked for), the exposure
 * and count reaching the target SNR per resolution element at the reference
 * wavelength under the drift-out-of-slit and maximum-exposure caps; total time =
 * acquisition + exposures and readouts + one re-centring (costed as an
 * acquisition) per slit-residence time. The slit with the shortest total wins
 * (the narrower on a tie). Also the limiting V in one longest exposure and in the window.
 */
export function spectrumPlan(site: Site, conditions: ObservingConditions, options: PlanOptions = {}): PlanResult<SpectrumPlan> {
  checkConditions(conditions);
  const common = commonOptions('spectrum', options, site);
  const sp = requireSpectrograph(site);
  const slits = options.slitArcsec !== undefined ? [options.slitArcsec] : [...sp.slitWidthsArcsec].sort((a, b) => a - b);
  const windowS = options.windowS ?? DEFAULT_WINDOW_S;
  let best: SpectrumPlan | null = null;
  const failures: string[] = [];
  let lastFigures: Record<string, number> = {};
  for (const slitArcsec of slits) {
    const setup = spectrumSetup(site, slitArcsec, conditions, options);
    const limits = spectrumLimits(site, slitArcsec, conditions);
    const solved = solveStep(setup.signal, limits, common.targetSnr, common.minExposureS, { allowed: true, maxCount: common.maxCount });
    const capS = limits[0]?.maxExposureS ?? sp.maxExposureS;
    const windowCount = Math.max(1, Math.floor((windowS - sp.acquisitionS) / (capS + sp.readoutS)));
    const singleExposureV = spectrumLimitingMagnitude(setup, conditions.airmass, common.targetSnr, capS);
    const windowV = spectrumLimitingMagnitude(setup, conditions.airmass, common.targetSnr, capS, windowCount);
    if (isUnsolved(solved)) {
      failures.push(`slit ${fmt(slitArcsec)} arcsec: ${solved.reason}`);
      lastFigures = { ...solved.figures, slitArcsec, limitingV: windowV, vMag: conditions.vMag };
      continue;
    }
    const residence = slitResidenceS(slitArcsec, conditions.rateSigmaArcsecPerS);
    const exposingS = solved.count * (solved.exposureS + sp.readoutS);
    const recentres = Number.isFinite(residence) ? Math.floor(exposingS / residence) : 0;
    const totalS = sp.acquisitionS + exposingS + recentres * sp.acquisitionS;
    if (totalS > windowS) {
      failures.push(`slit ${fmt(slitArcsec)} arcsec: needs ${fmt(totalS)} s, longer than the ${fmt(windowS)} s available (limiting V ${fmt(windowV, 4)} in that time)`);
      lastFigures = { totalS, windowS, slitArcsec, limitingV: windowV, vMag: conditions.vMag };
      continue;
    }
    const plan: SpectrumPlan = {
      feasible: true,
      kind: 'spectrum',
      steps: [toStep(solved, limits, { slitArcsec })],
      slitArcsec,
      slitFraction: setup.slitFraction,
      resolutionNm: setup.resolutionNm,
      resolvingPower: setup.resolvingPower,
      referenceWavelengthNm: sp.referenceWavelengthNm,
      recentreEveryS: Number.isFinite(residence) ? residence : null,
      recentres,
      acquisitionS: sp.acquisitionS,
      totalS,
      limitingMagnitude: { singleExposureV, windowV, windowS },
      notes: [],
    };
    if (best === null || plan.totalS < best.totalS) best = plan;
  }
  if (best === null) return notFeasible('spectrum', failures.join('; '), lastFigures);
  return best;
}

/** The plan for any request kind: the single entry point for the planner. */
export function planExposure(kind: RequestKind, site: Site, conditions: ObservingConditions, options: PlanOptions = {}): PlanResult {
  switch (kind) {
    case 'photometry':
      return photometryPlan(site, conditions, options);
    case 'colours':
      return coloursPlan(site, conditions, options);
    case 'spectrum':
      return spectrumPlan(site, conditions, options);
  }
}
