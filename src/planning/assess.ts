import type { RangePriorChoice, Site } from '../config/schema.js';
import { seedForObject, type EstimateSummary, type ObjectEstimate } from '../orbit/estimate-types.js';
import type { TrackletObservation } from '../domain/tracklet.js';
import { FIRST_LOOK, firstLookNote, widenedTrackSource, type FirstLookInfo } from './first-look.js';
import { estimateObject, type PackedCore, type RangePriorKind } from '../orbit/estimation/index.js';
import type { OrbitBlock } from '../domain/orbit-block.js';
import type { ScoreWeights } from './score.js';
import { planObject, type ObjectPlan, type PlannedRequest } from './plan-object.js';
import { TRACK_STEP_MIN } from './track.js';
import { chainedTrackSource } from './track-source.js';
import { approachStartFor, chainPhaseMs, estimateKey, type SkyTimelineCache, type TrackCache } from './reuse.js';

/** What one assessment of an object takes: its tracklet, its orbit block if any, the sites and a clock. */
export interface AssessmentInput {
  objectId: string;
  observations: TrackletObservation[];
  orbit: OrbitBlock | null;
  now: Date;
  sites: Site[];
  horizonH: number;
  members: number;
  weights?: Partial<ScoreWeights>;
  /** Seed of the virtual orbits; default derived from the object id, so a replan of the same data gives the same answer. */
  seed?: number;
  /** Range prior of the estimate; 'auto' (default) lets the estimator choose by the number of positions. */
  rangePrior?: RangePriorChoice;
  /** Work kept from earlier assessments (reuse.ts): the same answer, sooner. */
  reuse?: AssessmentReuse;
  /** An estimate kept from an earlier assessment (stored across restarts): used when its key is this input's. */
  keptEstimate?: { key: string; core: PackedCore } | null;
  /** A first look (first-look.ts): FIRST_LOOK.members virtual orbits instead of `members`, regions widened. */
  firstLook?: boolean;
}

/** What a long-lived caller (a worker thread) keeps between assessments. */
export interface AssessmentReuse {
  tracks: TrackCache;
  timelines: SkyTimelineCache;
}

export type { RangePriorChoice };

/** The estimate with one more note in its summary. */
function withNote(estimate: ObjectEstimate, note: string): ObjectEstimate {
  return { ...estimate, summary: { ...estimate.summary, notes: [...estimate.summary.notes, note] } };
}

/** Ranging options for a range-prior choice ('auto' leaves the estimator's default). */
export function rangingFor(choice: RangePriorChoice | undefined): { rangePrior?: RangePriorKind } {
  return choice === undefined || choice === 'auto' ? {} : { rangePrior: choice };
}

/** Stored as the assessment's summary: the estimate and, per site, windows, requests' scores and reasons. */
export interface AssessmentSummary {
  objectId: string;
  assessedAt: string;
  firstObservedAt: string;
  estimate: EstimateSummaryOut;
  horizonEnd: string;
  sites: { siteId: string; siteName: string; windows: unknown[]; reasons: string[]; requests: { kind: string; score: number; windowStart: string; windowEnd: string; factors: unknown }[] }[];
  /** Set when the assessment was a first look (a cheaper estimate under backlog; first-look.ts). */
  firstLook?: FirstLookInfo;
}

/** The summary stored with an assessment, from the estimate and its plan. */
export function assessmentSummary(estimate: ObjectEstimate, plan: ObjectPlan): AssessmentSummary {
  return {
    objectId: estimate.objectId,
    assessedAt: plan.plannedAt,
    firstObservedAt: estimate.firstObservedAt,
    estimate: estimateSummaryOut(estimate.summary),
    horizonEnd: plan.horizonEnd,
    sites: plan.sites.map((s) => ({
      siteId: s.siteId,
      siteName: s.siteName,
      windows: s.windows,
      reasons: s.reasons,
      requests: s.requests.map((r) => ({ kind: r.kind, score: r.score, windowStart: r.windowStart, windowEnd: r.windowEnd, factors: r.body.score })),
    })),
  };
}

export interface Assessment {
  plan: ObjectPlan;
  estimateSummary: EstimateSummary;
  requests: PlannedRequest[];
  summary: AssessmentSummary;
  /** Set when no site has a window in the horizon. */
  retireReason: string | null;
  /** When the object is next usable at some site, and until when (usableSpan). */
  usable: UsableSpan;
  /** Set for a first look: how it was cheaper. */
  firstLook: FirstLookInfo | null;
  /** The estimate's key (estimateKey), its core packed, and whether it was computed here (not reused). */
  estimate: { key: string; core: PackedCore; computed: boolean };
}

/** ISO UTC times: `from` the earliest usable time at any site; `until` the last, or null when it lasts to the horizon's end. */
export interface UsableSpan {
  from: string | null;
  until: string | null;
}

/**
 * When an object is usable according to its plan: from the earliest start of a
 * run of times where some request kind is feasible at any site, to the latest
 * end of one; `until` is null when that end is within one track step of the
 * horizon's end (the object stays usable beyond what was planned).
 */
export function usableSpan(plan: ObjectPlan): UsableSpan {
  const spans = plan.sites.flatMap((s) => (s.usable ? [s.usable] : []));
  if (spans.length === 0) return { from: null, until: null };
  const from = spans.map((u) => u.from).reduce((a, b) => (b < a ? b : a));
  const until = spans.map((u) => u.until).reduce((a, b) => (b > a ? b : a));
  const open = Date.parse(until) >= Date.parse(plan.horizonEnd) - TRACK_STEP_MIN * 60_000;
  return { from, until: open ? null : until };
}

export { seedForObject };

/** The estimate summary as the service writes it (stored assessments, `nightjar plan --json`). */
export type EstimateSummaryOut = Omit<EstimateSummary, 'classFractions'> & {
  /** Fractions of the virtual orbits by orbit class (sum 1): nearEarth q < 1.3 au, mainBelt, other. */
  classFractions: { nearEarth: number; mainBelt: number; other: number };
};

/** The summary with its class fractions named for what they are: `nearEarth` is the fraction with q < 1.3 au. */
export function estimateSummaryOut(summary: EstimateSummary): EstimateSummaryOut {
  const { neo, mainBelt, other } = summary.classFractions;
  return { ...summary, classFractions: { nearEarth: neo, mainBelt, other } };
}

/** Score weights from the configuration, leaving out the ones not set (they take the defaults). */
export function weightsFromConfig(weights: Readonly<Record<string, number | undefined>>): Partial<ScoreWeights> {
  const out: Partial<ScoreWeights> = {};
  for (const [k, v] of Object.entries(weights)) if (typeof v === 'number') out[k as keyof ScoreWeights] = v;
  return out;
}

/**
 * The whole assessment of one object: orbit estimate (ranging, or the orbit
 * block with its ensemble), then the plan for every site. Pure apart from the
 * clock passed in; the same input gives the same answer, whether `reuse` holds
 * earlier work or not (reuse.ts: the estimate under its key, its chained track).
 * The estimate's close-approach search starts at approachStartFor(tracklet, now).
 */
export function assessObject(input: AssessmentInput): Assessment {
  const firstLook: FirstLookInfo | null = input.firstLook
    ? { members: Math.min(FIRST_LOOK.members, input.members), widenedBy: FIRST_LOOK.widen, horizonH: Math.min(FIRST_LOOK.horizonH, input.horizonH) }
    : null;
  const members = firstLook?.members ?? input.members;
  const seed = input.seed ?? seedForObject(input.objectId);
  const approachStart = approachStartFor(input.observations, input.now);
  // A first look draws its fewer members from as many proposals as the full estimate (first-look.ts).
  const proposals = firstLook ? FIRST_LOOK.proposals : undefined;
  const key = estimateKey({
    objectId: input.objectId,
    observations: input.observations,
    orbit: input.orbit,
    rangePrior: input.rangePrior ?? 'auto',
    members,
    seed,
    approachStart,
    ...(proposals === undefined ? {} : { proposals }),
  });
  let track = input.reuse?.tracks.get(key);
  if (track === undefined && input.keptEstimate?.key === key) track = chainedTrackSource(input.keptEstimate.core, chainPhaseMs(seed));
  const computed = track === undefined;
  if (track === undefined) {
    const estimate = estimateObject({
      objectId: input.objectId,
      observations: input.observations,
      orbit: input.orbit ?? undefined,
      now: approachStart,
      members,
      seed,
      ranging: { ...rangingFor(input.rangePrior), ...(proposals === undefined ? {} : { proposals }) },
    });
    track = chainedTrackSource(estimate.core, chainPhaseMs(seed));
  }
  const estimate = firstLook ? withNote(track.estimate, firstLookNote(firstLook, input.members)) : track.estimate;
  const timelines = input.reuse?.timelines;
  const plan = planObject({
    estimate,
    track: firstLook ? widenedTrackSource(track, firstLook.widenedBy) : track,
    ...(firstLook ? { firstLook } : {}),
    ...(timelines ? { skyTimeline: (site: Site, startMs: number, endMs: number) => timelines.timeline(site, startMs, endMs) } : {}),
    sites: input.sites,
    now: input.now,
    horizonH: firstLook?.horizonH ?? input.horizonH,
    ...(input.weights ? { weights: input.weights } : {}),
  });
  if (input.reuse) {
    track.forgetBefore(input.now.getTime());
    input.reuse.tracks.set(key, track);
  }
  const requests = plan.sites.flatMap((s) => s.requests);
  const noWindow = plan.sites.every((s) => s.windows.length === 0);
  return {
    plan,
    estimateSummary: estimate.summary,
    requests,
    summary: { ...assessmentSummary(estimate, plan), ...(firstLook ? { firstLook } : {}) },
    usable: usableSpan(plan),
    firstLook,
    estimate: { key, core: track.baseCore, computed },
    // A first look sees only part of the horizon: it never retires an object.
    retireReason: noWindow && firstLook === null
      ? `no observable window at any site in the next ${plan.horizonH} h (${plan.sites.map((s) => `${s.siteId}: ${s.reasons[0] ?? 'no window'}`).join('; ')})`
      : null,
  };
}
