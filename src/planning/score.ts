import { PlanningInputError, requireFinite } from './errors.js';

/**
 * The request score, 0-100: a weighted mean of four named factors, each in
 * [0, 1] with a sentence saying why it has its value. The formula is ours and
 * is written out, with a worked example, in docs/scoring.md; it is
 * deterministic (the same inputs give the same score) and never overrides a
 * hard limit (a request only exists inside an observable window).
 */

export interface ScoreWeights {
  /** Weights of the four factors (any non-negative numbers; normalised by their sum). */
  urgency: number;
  value: number;
  feasibility: number;
  freshness: number;
  /** Weights of the parts of `value`. */
  size: number;
  closeApproach: number;
  nearEarthFraction: number;
}

export const DEFAULT_SCORE_WEIGHTS: Readonly<ScoreWeights> = Object.freeze({
  urgency: 0.3,
  value: 0.3,
  feasibility: 0.25,
  freshness: 0.15,
  size: 0.4,
  closeApproach: 0.3,
  nearEarthFraction: 0.3,
});

/** Size part: H at which it is 0 and 1 (linear between); H 22 gives 0.67. */
export const SIZE_H_ZERO = 18;
export const SIZE_H_ONE = 24;
/** Close-approach part: 1 at or inside 1 lunar distance, 0 at 50, logarithmic between. */
export const CLOSE_LD_ZERO = 50;
/** Freshness: full for the first 12 h after discovery (the first night), then e-folding every 24 h. */
export const FRESH_FULL_H = 12;
export const FRESH_EFOLD_H = 24;
/** Brightness margin at which the feasibility part is full, mag (2 mag: 6.3 x the flux at the limit). */
export const MARGIN_FULL_MAG = 2;

export interface ScoreInputs {
  /** Planning horizon, h. */
  horizonH: number;
  /** Windows at this site in the horizon where the light curve is feasible (>= 1 for a request). */
  feasibleWindows: number;
  /** Hours from now to the end of the last feasible window (horizonH when it runs to the end of the horizon). */
  hoursLeft: number;
  /** Median absolute magnitude H; null when unknown. */
  hMag: number | null;
  /** Median minimum geocentric distance, lunar distances; null when unknown. */
  minDistanceLunar: number | null;
  /** Fraction of the virtual orbits with perihelion distance q < 1.3 au, 0..1. */
  nearEarthFraction: number;
  /** How much brighter the object is than the faintest V the request's plan still reaches there, mag (0 at the limit). */
  marginMag: number;
  /** That limiting V, for the sentence (null when not found). */
  limitingVMag?: number | null;
  /** Length of the request window, s, and of its sequence, s. */
  windowS: number;
  sequenceS: number;
  /** Airmass at the recommended start and the site's airmass limit. */
  airmass: number;
  maxAirmass: number;
  /** Hours since the first observation. */
  hoursSinceDiscovery: number;
}

export interface ScorePart {
  name: string;
  value: number;
}

export interface ScoreFactor {
  name: 'urgency' | 'value' | 'feasibility' | 'freshness';
  /** 0..1 (rounded to 0.001). */
  value: number;
  /** Normalised weight (the weights sum to 1). */
  weight: number;
  why: string;
  parts: ScorePart[];
}

export interface Score {
  /** 0..100, rounded to 0.1. */
  total: number;
  factors: ScoreFactor[];
}

const clamp01 = (x: number) => Math.min(1, Math.max(0, x));
const r3 = (x: number) => Math.round(x * 1000) / 1000;
const f1 = (x: number) => x.toFixed(1);

function checkWeights(w: ScoreWeights): void {
  for (const key of Object.keys(DEFAULT_SCORE_WEIGHTS) as (keyof ScoreWeights)[]) requireFinite(`weights.${key}`, w[key], 0);
  if (w.urgency + w.value + w.feasibility + w.freshness <= 0) throw new PlanningInputError('weights', 0, 'the four factor weights must not all be 0');
  if (w.size + w.closeApproach + w.nearEarthFraction <= 0) throw new PlanningInputError('weights', 0, 'the value part weights must not all be 0');
}

/** Urgency = 0.5 / (feasible windows) + 0.5 x (1 - hoursLeft / horizonH), clamped to [0, 1]. */
export function urgencyFactor(i: Pick<ScoreInputs, 'horizonH' | 'feasibleWindows' | 'hoursLeft'>): { value: number; parts: ScorePart[]; why: string } {
  const windows = 0.5 / Math.max(1, i.feasibleWindows);
  const left = 0.5 * clamp01(1 - i.hoursLeft / i.horizonH);
  const why =
    i.hoursLeft >= i.horizonH
      ? `${i.feasibleWindows} feasible window(s) in the next ${f1(i.horizonH)} h and still feasible at its end`
      : `${i.feasibleWindows} feasible window(s) in the next ${f1(i.horizonH)} h; the last closes in ${f1(i.hoursLeft)} h`;
  return { value: clamp01(windows + left), parts: [{ name: 'fewWindows', value: r3(windows) }, { name: 'littleTimeLeft', value: r3(left) }], why };
}

/** Value = weighted mean of size (H ramp 18 -> 24), close approach (log, 1 LD -> 50 LD) and the near-Earth fraction (q < 1.3 au). */
export function valueFactor(i: Pick<ScoreInputs, 'hMag' | 'minDistanceLunar' | 'nearEarthFraction'>, w: ScoreWeights): { value: number; parts: ScorePart[]; why: string } {
  const size = i.hMag === null ? 0.5 : clamp01((i.hMag - SIZE_H_ZERO) / (SIZE_H_ONE - SIZE_H_ZERO));
  const close = i.minDistanceLunar === null ? 0 : clamp01(1 - Math.log10(Math.max(i.minDistanceLunar, 1)) / Math.log10(CLOSE_LD_ZERO));
  const nearEarth = clamp01(i.nearEarthFraction);
  const value = (w.size * size + w.closeApproach * close + w.nearEarthFraction * nearEarth) / (w.size + w.closeApproach + w.nearEarthFraction);
  const hText = i.hMag === null ? 'H unknown (size part 0.5)' : `H ${f1(i.hMag)}${i.hMag > 22 ? ' (a small object)' : ''}`;
  const dText = i.minDistanceLunar === null ? 'closest approach unknown' : `closest approach ${f1(i.minDistanceLunar)} lunar distances`;
  return {
    value,
    parts: [{ name: 'size', value: r3(size) }, { name: 'closeApproach', value: r3(close) }, { name: 'nearEarthFraction', value: r3(nearEarth) }],
    why: `${hText}; ${dText}; ${Math.round(nearEarth * 100)} % of virtual orbits with q < 1.3 au`,
  };
}

/**
 * Feasibility = mean of the brightness margin (margin mag / 2: 0 at the limit, 1 at 2 mag brighter;
 * the SNR margin in magnitudes), room (window / 2 sequence) and airmass ((Xmax - X)/(Xmax - 1)), each clamped.
 */
export function feasibilityFactor(i: Pick<ScoreInputs, 'marginMag' | 'limitingVMag' | 'windowS' | 'sequenceS' | 'airmass' | 'maxAirmass'>): { value: number; parts: ScorePart[]; why: string } {
  const margin = clamp01(i.marginMag / MARGIN_FULL_MAG);
  const room = clamp01(i.windowS / (2 * Math.max(i.sequenceS, 1)));
  const air = i.maxAirmass > 1 ? clamp01((i.maxAirmass - i.airmass) / (i.maxAirmass - 1)) : 1;
  return {
    value: (margin + room + air) / 3,
    parts: [{ name: 'brightnessMargin', value: r3(margin) }, { name: 'room', value: r3(room) }, { name: 'airmass', value: r3(air) }],
    why: `${i.marginMag.toFixed(1)} mag brighter than the limit${i.limitingVMag === undefined || i.limitingVMag === null ? '' : ` V ${i.limitingVMag.toFixed(1)}`}; window ${f1(i.windowS / 60)} min for a ${f1(i.sequenceS / 60)} min sequence; airmass ${i.airmass.toFixed(2)} (limit ${i.maxAirmass.toFixed(2)})`,
  };
}

/** Freshness = 1 for the first 12 h after discovery, then exp(-(h - 12) / 24). */
export function freshnessFactor(i: Pick<ScoreInputs, 'hoursSinceDiscovery'>): { value: number; parts: ScorePart[]; why: string } {
  const h = Math.max(0, i.hoursSinceDiscovery);
  const value = h <= FRESH_FULL_H ? 1 : Math.exp(-(h - FRESH_FULL_H) / FRESH_EFOLD_H);
  return {
    value,
    parts: [{ name: 'hoursSinceDiscovery', value: r3(h) }],
    why: h <= FRESH_FULL_H ? `discovered ${f1(h)} h ago: its first night` : `discovered ${f1(h)} h ago: past its first night`,
  };
}

/** The score: 100 x sum(weight x factor) / sum(weights), rounded to 0.1 (see docs/scoring.md). */
export function scoreRequest(inputs: ScoreInputs, weights: ScoreWeights = DEFAULT_SCORE_WEIGHTS): Score {
  checkWeights(weights);
  requireFinite('horizonH', inputs.horizonH, Number.MIN_VALUE);
  requireFinite('feasibleWindows', inputs.feasibleWindows, 0);
  requireFinite('hoursLeft', inputs.hoursLeft, 0);
  if (inputs.hMag !== null) requireFinite('hMag', inputs.hMag);
  if (inputs.minDistanceLunar !== null) requireFinite('minDistanceLunar', inputs.minDistanceLunar, 0);
  requireFinite('nearEarthFraction', inputs.nearEarthFraction, 0, 1);
  requireFinite('marginMag', inputs.marginMag, 0);
  requireFinite('windowS', inputs.windowS, 0);
  requireFinite('sequenceS', inputs.sequenceS, 0);
  requireFinite('airmass', inputs.airmass, 1);
  requireFinite('maxAirmass', inputs.maxAirmass, 1);
  requireFinite('hoursSinceDiscovery', inputs.hoursSinceDiscovery);
  const sum = weights.urgency + weights.value + weights.feasibility + weights.freshness;
  const made = [
    { name: 'urgency' as const, weight: weights.urgency / sum, ...urgencyFactor(inputs) },
    { name: 'value' as const, weight: weights.value / sum, ...valueFactor(inputs, weights) },
    { name: 'feasibility' as const, weight: weights.feasibility / sum, ...feasibilityFactor(inputs) },
    { name: 'freshness' as const, weight: weights.freshness / sum, ...freshnessFactor(inputs) },
  ];
  const total = Math.round(1000 * made.reduce((s, f) => s + f.weight * f.value, 0)) / 10;
  return {
    total,
    factors: made.map((f) => ({ name: f.name, value: r3(f.value), weight: r3(f.weight), why: f.why, parts: f.parts })),
  };
}
