import type { Site } from '../config/schema.js';
import type { ObjectEstimate } from '../orbit/estimate-types.js';
import type { EphemerisRow } from '../orbit/ephemeris.js';
import { planExposure, type ExposurePlan, type PlanResult } from '../photometry/plans.js';
import { DEFAULT_LIGHT_CURVE_BOUNDS_MIN, lightCurveLength, likelyDiameterM, type LightCurveLength } from '../photometry/cadence.js';
import type { ObservingConditions } from '../photometry/conditions.js';
import { REQUEST_KINDS, type RequestKind } from '../domain/request-kind.js';
import { buildSkyTimeline, skyFromTimeline, type SkyTimeline } from '../sky/timeline.js';
import { observableWindows, type ObservableWindow } from '../sky/windows.js';
import { localNightOf } from '../sky/night.js';
import { airmassKastenYoung, angleBetweenDeg, apparentInFrame } from '../sky/site.js';
import { siteVExtinctionMagPerAirmass, skyBrightnessKS } from '../sky/sky-brightness.js';
import { PlanningInputError, requireDate, requireFinite } from './errors.js';
import { DEFAULT_SCORE_WEIGHTS, scoreRequest, type Score, type ScoreWeights } from './score.js';
import { searchPattern, type SearchPattern } from './search-pattern.js';
import { buildTrack, TRACK_STEP_MIN, type Track, type TrackPoint } from './track.js';
import { directTrackSource, TRACK_STEP_MS, type TrackSource } from './track-source.js';
import type { FirstLookInfo } from './first-look.js';

/**
 * The planner: for one assessed object and every configured site, either up to
 * three requests (photometry, colours, spectrum) inside the site's observable
 * windows, or the reasons in words and numbers why not.
 *
 * Method, per site: sample the estimate's nominal track every 20 min over the
 * horizon (track.ts); find the observable windows with the sky module (every hard
 * limit, Sun avoidance included, is the sky module's and never relaxed here);
 * at the window edges and every grid time inside, work out the observing
 * conditions (airmass by Kasten & Young 1989, V sky by Krisciunas & Schaefer
 * 1991) and ask the photometry module whether each kind is feasible there; a
 * request's window is the first run of feasible times inside a sky window (so it
 * can only shrink a sky window, never extend it); check the 3-sigma uncertainty
 * against the imager field (or propose a search pattern) and, for spectra, the
 * acquisition field; score (score.ts); tabulate the exact ephemeris across the
 * request window every 5 min.
 */

/** Ephemeris table spacing in a request, minutes. */
export const TABLE_STEP_MIN = 5;
/** Most pointings a search pattern may have before the object needs astrometry first (planning assumption: 3 x 3). */
export const DEFAULT_MAX_SEARCH_POINTINGS = 9;
export const REQUEST_FORMAT = 'nightjar.request.v1';

export interface PlannerOptions {
  maxSearchPointings?: number;
}

export interface PlanObjectInput {
  estimate: ObjectEstimate;
  sites: Site[];
  now: Date;
  /** Planning horizon from now, hours (config planning.horizonH). */
  horizonH: number;
  weights?: Partial<ScoreWeights>;
  options?: PlannerOptions;
  /** Where the track's rows come from (default: straight from the estimate); see track-source.ts. */
  track?: TrackSource;
  /**
   * The sky timeline of a site over [startMs, endMs] (whole track steps of UTC), when the caller
   * keeps timelines for many objects; default: built here. It must be buildSkyTimeline's answer.
   */
  skyTimeline?: (site: Site, startMs: number, endMs: number) => SkyTimeline;
  /** Set for a first look (first-look.ts): its requests say so. */
  firstLook?: FirstLookInfo;
}

export interface WindowSummary {
  start: string;
  end: string;
  durationMin: number;
  opensBecause: string;
  closesBecause: string;
}

export interface TableRow {
  t: string;
  ra: number;
  dec: number;
  raRate: number;
  decRate: number;
  unc: { major: number; minor: number; pa: number } | null;
  mag: number | null;
  alt: number;
  airmass: number | null;
}

export interface SequenceStep {
  filter?: string;
  slitArcsec?: number;
  exposureS: number;
  count: number;
  expectedSnr: number;
  snrPerExposure: number;
  limitingFactor: string;
}

/** What the queue software executes; every quantity carries its unit in its name or in `units`. */
export interface RequestBody {
  format: typeof REQUEST_FORMAT;
  objectId: string;
  siteId: string;
  kind: RequestKind;
  plannedAtUtc: string;
  windowStartUtc: string;
  windowEndUtc: string;
  windowOpensBecause: string;
  windowClosesBecause: string;
  recommendedStartUtc: string;
  expectedDurationS: number;
  expiresAtUtc: string;
  target: {
    raDeg: number;
    decDeg: number;
    vMag: number;
    /** Faintest V this kind's plan still reaches under the same conditions and time. */
    limitingVMag: number | null;
    vMagSigma: number | null;
    uncertainty1Sigma: { majorArcsec: number; minorArcsec: number; paDeg: number } | null;
    region3SigmaAcrossArcsec: number | null;
  };
  sequence: {
    steps: SequenceStep[];
    cadenceS?: number;
    filterCycle?: string[];
    cycles?: number;
    recentreEveryS?: number | null;
    acquisitionS?: number;
    resolvingPower?: number;
    notes: string[];
  };
  /**
   * Light curves: why the sequence is as long as it is. About two cycles of the longest plausible
   * period for the likely size, within the site's bounds; `part` 2 is the follow-on in a later window.
   */
  lightCurve?: {
    likelyDiameterM: number | null;
    longestPlausiblePeriodS: number;
    periodBasis: string;
    wantedS: number;
    boundsS: { min: number; max: number };
    sequenceS: number;
    part: 1 | 2;
    parts: 1 | 2;
    followOnS: number;
  };
  tracking: { mode: 'non-sidereal'; atUtc: string; raRateArcsecPerS: number; decRateArcsecPerS: number; totalRateArcsecPerS: number };
  conditionsAtStart: { altitudeDeg: number; airmass: number; skyVMagPerArcsec2: number; moonSeparationDeg: number };
  searchPattern: SearchPattern | null;
  ephemeris: { stepMin: number; frame: string; units: Record<keyof TableRow, string>; rows: TableRow[] };
  score: Score;
  assessment: {
    method: string;
    members: number;
    firstObservedAtUtc: string;
    hMagP50: number | null;
    diameterM: { min: number; max: number } | null;
    /** Fraction of the virtual orbits with q < 1.3 au. */
    nearEarthFraction: number;
    closeApproach: boolean;
    minDistanceLunarP50: number;
    notes: string[];
    /** Present on a first look's requests (a cheaper estimate under backlog, widened regions); the full assessment revises them. */
    firstLook?: true;
  };
}

/** A request as the store takes it (NewRequest's fields) plus its duration. */
export interface PlannedRequest {
  siteId: string;
  kind: RequestKind;
  /** The local night of the window's start (the sky module's localNightOf). */
  night: string;
  score: number;
  windowStart: string;
  windowEnd: string;
  recommendedStart: string;
  expiresAt: string;
  durationS: number;
  body: RequestBody;
}

export interface SitePlan {
  siteId: string;
  siteName: string;
  windows: WindowSummary[];
  /** Ordered photometry, colours, spectrum (those feasible). */
  requests: PlannedRequest[];
  /** Why there is no request, or why a kind is missing ("spectrum: ..."), in words and numbers. */
  reasons: string[];
  /** From the start of the first run of times where some kind is feasible to the end of the last (ISO UTC); null when there is none. */
  usable: { from: string; until: string } | null;
}

export interface ObjectPlan {
  objectId: string;
  plannedAt: string;
  horizonEnd: string;
  horizonH: number;
  sites: SitePlan[];
}

interface Conditions {
  point: TrackPoint;
  altDeg: number;
  airmass: number;
  skyV: number;
  moonSepDeg: number;
  observing: ObservingConditions | null;
}

const MS_PER_MIN = 60_000;
const r = (x: number, digits: number) => Number(x.toFixed(digits));
const fmt = (x: number, digits = 3) => Number(x.toPrecision(digits)).toString();

/** Rate uncertainty, arcsec/s: how fast the 1-sigma major axis grows along the track (what tracking gets wrong). */
function rateSigma(track: Track, tMs: number): number {
  const a = track.at(Math.max(track.startMs, tMs - 300_000));
  const b = track.at(Math.min(track.endMs, tMs + 300_000));
  const dt = (b.tMs - a.tMs) / 1000;
  if (a.uncMajor === null || b.uncMajor === null || dt <= 0) return 0;
  return Math.abs(b.uncMajor - a.uncMajor) / dt;
}

function conditionsAt(site: Site, timeline: SkyTimeline, track: Track, tMs: number, diameter: ObservingConditions['diameterRangeM'] | undefined): Conditions {
  const point = track.at(tMs);
  const sky = skyFromTimeline(timeline, new Date(tMs));
  const apparent = apparentInFrame(sky.frame, point.ra, point.dec);
  const altDeg = apparent.altDeg;
  const airmass = altDeg > 0 ? Math.min(40, Math.max(1, airmassKastenYoung(Math.min(altDeg, 90)))) : 40;
  const moonSepDeg = angleBetweenDeg(apparent.eqdUnit, sky.moon.eqdUnit);
  const skyV = skyBrightnessKS({
    darkZenithVMagPerArcsec2: site.darkSkyVMagPerArcsec2,
    extinctionMagPerAirmass: siteVExtinctionMagPerAirmass(site),
    moonPhaseAngleDeg: Math.min(180, Math.max(0, sky.moon.phaseAngleDeg)),
    moonSeparationDeg: Math.min(180, moonSepDeg),
    moonAltitudeDeg: sky.moon.altDeg,
    targetAltitudeDeg: Math.max(0, Math.min(90, altDeg)),
  }).vMagPerArcsec2;
  const observing: ObservingConditions | null =
    point.mag === null || altDeg <= 0
      ? null
      : {
          vMag: point.mag,
          rateArcsecPerS: Math.hypot(point.raRate, point.decRate),
          rateSigmaArcsecPerS: rateSigma(track, tMs),
          airmass: Math.min(40, airmass),
          skyVMagPerArcsec2: Math.min(30, Math.max(5, skyV)),
          ...(diameter === undefined ? {} : { diameterRangeM: diameter }),
        };
  return { point, altDeg, airmass, skyV, moonSepDeg, observing };
}

/**
 * The photometry module's plan for a kind. A light curve that fails only because the fastest
 * plausible spin of a small object caps frames too short is retried without the spin cap: it then
 * samples the periods it can (ten frames per period or more), and says so in a note.
 */
function planAt(kind: RequestKind, site: Site, c: Conditions, windowS: number): PlanResult {
  if (c.observing === null) return { feasible: false, kind, reason: 'no predicted magnitude', figures: {} };
  const options = { windowS: Math.max(1, windowS) };
  const plan = planExposure(kind, site, c.observing, options);
  if (kind !== 'photometry' || plan.feasible || c.observing.diameterRangeM === undefined || !plan.reason.includes('rotation sampling')) return plan;
  const { diameterRangeM: _dropped, ...withoutSpin } = c.observing;
  const retry = planExposure(kind, site, withoutSpin, options);
  if (!retry.feasible || retry.kind !== 'photometry') return plan;
  const shortestS = (retry.steps[0].exposureS + site.imager.readoutS) * 10;
  return {
    ...retry,
    notes: [...retry.notes.filter((n) => !n.startsWith('no diameter range')), `the fastest plausible spins of an object this small cannot be sampled at this brightness; frames resolve periods from about ${fmt(shortestS)} s`],
  };
}

/**
 * Faintest V for which the kind is still feasible under these conditions (same sky, airmass, rate,
 * time available), by bracketing in 1-mag steps and bisecting to 0.01 mag; null when it is not
 * feasible even 12 mag brighter (e.g. saturation).
 */
function limitingV(kind: RequestKind, site: Site, c: Conditions, windowS: number): number | null {
  if (c.observing === null) return null;
  const observing = c.observing;
  const feasibleAt = (v: number) => planAt(kind, site, { ...c, observing: { ...observing, vMag: v } }, windowS).feasible;
  const v0 = observing.vMag;
  let bright: number;
  let faint: number;
  if (feasibleAt(v0)) {
    bright = v0;
    faint = v0 + 1;
    while (feasibleAt(faint)) {
      bright = faint;
      faint += 1;
      if (faint > v0 + 15) return bright;
    }
  } else {
    faint = v0;
    bright = v0 - 12;
    if (!feasibleAt(bright)) return null;
  }
  for (let k = 0; k < 40 && faint - bright > 0.01; k++) {
    const mid = (faint + bright) / 2;
    if (feasibleAt(mid)) bright = mid;
    else faint = mid;
  }
  return bright;
}

interface Candidate {
  tMs: number;
  c: Conditions;
  /** Feasible with the whole sky window available (brightness test). */
  bright: PlanResult;
}

interface KindChoice {
  kind: RequestKind;
  window: ObservableWindow;
  startMs: number;
  endMs: number;
  opensBecause: string;
  closesBecause: string;
  recommended: Candidate;
  plan: ExposurePlan;
  /** Time the plan was given, s: what is left of the window, or less for a light curve sized for its purpose. */
  planWindowS: number;
  /** Light curves: the length chosen and which request of the object's light curve at this site this is. */
  lightCurve?: { length: LightCurveLength; part: 1 | 2; parts: 1 | 2 };
}

interface WindowCandidates {
  w: ObservableWindow;
  windowS: number;
  byKind: Map<RequestKind, Candidate[]>;
}

/** A site's light-curve bounds, minutes: its `lightCurve` settings with the photometry module's defaults, the pair kept in order. */
export function lightCurveBoundsOf(site: Site): { minMinutes: number; maxMinutes: number } {
  const set = site.lightCurve ?? {};
  const minMinutes = set.minMinutes ?? Math.min(DEFAULT_LIGHT_CURVE_BOUNDS_MIN.minMinutes, set.maxMinutes ?? Number.POSITIVE_INFINITY);
  const maxMinutes = set.maxMinutes ?? Math.max(DEFAULT_LIGHT_CURVE_BOUNDS_MIN.maxMinutes, minMinutes);
  return { minMinutes, maxMinutes };
}

/**
 * The first run of bright-enough times, in window order, where the kind's plan fits: light curves
 * from the run's first time (longest coverage), given at most `lengthS` (their sized length) and
 * needing at least `minLengthS`; colours and spectra at the lowest airmass that still fits. Else
 * the failure with the most time available, which says most about why the kind does not fit.
 */
function chooseWindow(kind: RequestKind, site: Site, windows: readonly WindowCandidates[], lengthS: number | null, minLengthS: number): { choice: KindChoice | null; failure: string | null } {
  let failure: string | null = null;
  let failureS = -1;
  const failed = (reason: string, availableS: number) => {
    if (availableS > failureS) {
      failure = reason;
      failureS = availableS;
    }
  };
  for (const { w, byKind } of windows) {
    for (const run of brightRuns(w, byKind.get(kind) ?? [], kind)) {
      const runS = (run.endMs - run.startMs) / 1000;
      if (kind === 'photometry' && runS < minLengthS) {
        failed(`window of ${fmt(runS / 60)} min is shorter than the ${fmt(minLengthS / 60)} min a light curve needs here (lightCurve.minMinutes)`, runS);
        continue;
      }
      const order = kind === 'photometry' ? run.members : [...run.members].sort((a, b) => a.c.airmass - b.c.airmass || a.tMs - b.tMs);
      for (const cand of order) {
        const availableS = (run.endMs - cand.tMs) / 1000;
        if (availableS <= 0) continue;
        if (kind === 'photometry' && availableS < minLengthS) break;
        const planWindowS = lengthS === null ? availableS : Math.min(availableS, lengthS);
        const plan = planAt(kind, site, cand.c, planWindowS);
        if (plan.feasible && plan.totalS <= availableS + 1e-6) {
          return {
            choice: { kind, window: w, startMs: run.startMs, endMs: run.endMs, opensBecause: run.opensBecause, closesBecause: run.closesBecause, recommended: cand, plan, planWindowS },
            failure: null,
          };
        }
        if (!plan.feasible) failed(plan.reason, availableS);
        else failed(`the sequence takes ${fmt(plan.totalS)} s, only ${fmt(availableS)} s left in the window`, availableS);
      }
    }
  }
  return { choice: null, failure };
}

interface WindowRun {
  startMs: number;
  endMs: number;
  opensBecause: string;
  closesBecause: string;
  members: Candidate[];
}

function candidatesIn(w: ObservableWindow, stepMs: number, originMs: number, make: (tMs: number) => Candidate): Candidate[] {
  const s = w.start.getTime();
  const e = w.end.getTime();
  const times = [s];
  for (let t = originMs + Math.ceil((s - originMs) / stepMs) * stepMs; t < e; t += stepMs) if (t > s) times.push(t);
  if (e > s) times.push(e);
  return times.map(make);
}

/** Maximal runs of bright-enough candidates; a run keeps the sky edge where it reaches the window's first or last time. */
function brightRuns(w: ObservableWindow, cands: Candidate[], what: string): WindowRun[] {
  const runs: WindowRun[] = [];
  let cur: Candidate[] = [];
  const seen = (c: Candidate | undefined) =>
    c === undefined || c.c.observing === null ? '' : ` (V ${c.c.observing.vMag.toFixed(1)}, airmass ${c.c.airmass.toFixed(2)}, sky V ${c.c.skyV.toFixed(1)} mag/arcsec^2)`;
  const close = (lastIndex: number) => {
    if (cur.length === 0) return;
    const first = cur[0]!;
    const last = cur[cur.length - 1]!;
    const atStart = first.tMs === w.start.getTime();
    const atEnd = lastIndex === cands.length - 1;
    runs.push({
      startMs: first.tMs,
      endMs: last.tMs,
      opensBecause: atStart ? w.starts.detail : `bright enough for ${what} from here${seen(first)}`,
      closesBecause: atEnd ? w.ends.detail : `too faint for ${what} ${fmt(TRACK_STEP_MIN)} min later${seen(cands[lastIndex + 1])}`,
      members: cur,
    });
    cur = [];
  };
  cands.forEach((cand, i) => {
    if (cand.bright.feasible) cur.push(cand);
    else close(i - 1);
  });
  close(cands.length - 1);
  return runs;
}

function uncertaintyExtent(p: TrackPoint): number | null {
  return p.uncMajor === null ? null : 6 * p.uncMajor;
}

function tableRow(row: EphemerisRow): TableRow {
  return {
    t: row.t,
    ra: r(row.ra, 6),
    dec: r(row.dec, 6),
    raRate: r(row.raRate, 4),
    decRate: r(row.decRate, 4),
    unc: row.unc === null ? null : { major: r(row.unc.major, 1), minor: r(row.unc.minor, 1), pa: r(row.unc.pa, 1) },
    mag: row.mag === null ? null : r(row.mag, 2),
    alt: r(row.alt, 2),
    airmass: row.airmass === null ? null : r(row.airmass, 3),
  };
}

const TABLE_UNITS: Record<keyof TableRow, string> = {
  t: 'ISO-8601 UTC',
  ra: 'deg, astrometric ICRS seen from the site (light-time corrected, no aberration)',
  dec: 'deg, astrometric ICRS seen from the site',
  raRate: 'arcsec/s, dRA/dt x cos(Dec)',
  decRate: 'arcsec/s',
  unc: '1-sigma ellipse: major and minor semi-axes arcsec, position angle deg east of north',
  mag: 'V mag (H-G)',
  alt: 'deg, apparent with refraction',
  airmass: 'Kasten & Young (1989)',
};

function sequenceOf(plan: ExposurePlan): RequestBody['sequence'] {
  const steps = plan.steps.map((s) => ({
    ...(s.filter === undefined ? {} : { filter: s.filter }),
    ...(s.slitArcsec === undefined ? {} : { slitArcsec: s.slitArcsec }),
    exposureS: s.exposureS,
    count: s.count,
    expectedSnr: r(s.snr, 1),
    snrPerExposure: r(s.snrPerExposure, 1),
    limitingFactor: s.limitingFactor,
  }));
  switch (plan.kind) {
    case 'photometry':
      return { steps, cadenceS: r(plan.cadenceS, 1), notes: plan.notes };
    case 'colours':
      return { steps, filterCycle: plan.cycle, cycles: plan.cycles, notes: plan.notes };
    case 'spectrum':
      return { steps, recentreEveryS: plan.recentreEveryS === null ? null : r(plan.recentreEveryS, 0), acquisitionS: plan.acquisitionS, resolvingPower: r(plan.resolvingPower, 0), notes: plan.notes };
  }
}

function checkInput(input: PlanObjectInput): void {
  requireDate('now', input.now);
  requireFinite('horizonH', input.horizonH, 0.5, 240);
  if (!Array.isArray(input.sites) || input.sites.length === 0) throw new PlanningInputError('sites', input.sites, 'expected at least one site');
  if (typeof input.estimate?.ephemeris !== 'function') throw new PlanningInputError('estimate', input.estimate, 'expected an ObjectEstimate with an ephemeris function');
  const first = Date.parse(input.estimate.firstObservedAt);
  if (!Number.isFinite(first)) throw new PlanningInputError('estimate.firstObservedAt', input.estimate.firstObservedAt, 'expected an ISO-8601 UTC time');
}

/** Plans one object at every site (see the module note). Pure: the same inputs give the same plan. */
export function planObject(input: PlanObjectInput): ObjectPlan {
  checkInput(input);
  const weights: ScoreWeights = { ...DEFAULT_SCORE_WEIGHTS, ...input.weights };
  const startMs = input.now.getTime();
  const endMs = startMs + Math.round(input.horizonH * 3_600_000);
  // The track and the sky timeline on whole steps of UTC around [now, now + horizon], so replans share their samples.
  const grid = { startMs: Math.floor(startMs / TRACK_STEP_MS) * TRACK_STEP_MS, endMs: Math.ceil(endMs / TRACK_STEP_MS) * TRACK_STEP_MS };
  const source = input.track ?? directTrackSource(input.estimate);
  const rows = source.gridRows(input.sites.map((s) => s.location), grid.startMs, grid.endMs);
  return {
    objectId: input.estimate.objectId,
    plannedAt: input.now.toISOString(),
    horizonEnd: new Date(endMs).toISOString(),
    horizonH: input.horizonH,
    sites: input.sites.map((site, i) => planSite(input, site, startMs, endMs, weights, grid, source, rows[i]!)),
  };
}

/**
 * The sky module's reasons for no window, placed in the horizon; when the object is faster than the
 * mount at every sample of the track, one reason with the slowest rate replaces the sky module's rate wording.
 */
function noWindowReasons(reasons: string[], track: Track, site: Site, horizonH: number): string[] {
  const slowest = Math.min(...track.rows.map((row) => Math.hypot(row.raRate, row.decRate)));
  const limit = site.limits.maxRateArcsecPerS;
  const placed = reasons.map((reason) => `${reason} (from this site in the next ${fmt(horizonH)} h)`);
  if (slowest <= limit) return placed;
  return [
    `moves ${fmt(slowest)} arcsec/s at its slowest in the next ${fmt(horizonH)} h, mount limit ${limit} arcsec/s`,
    ...placed.filter((reason) => !reason.includes('arcsec/s')),
  ];
}

function planSite(
  input: PlanObjectInput,
  site: Site,
  startMs: number,
  endMs: number,
  weights: ScoreWeights,
  grid: { startMs: number; endMs: number },
  source: TrackSource,
  trackRows: readonly EphemerisRow[],
): SitePlan {
  const { estimate, horizonH } = input;
  const maxPointings = input.options?.maxSearchPointings ?? DEFAULT_MAX_SEARCH_POINTINGS;
  const out: SitePlan = { siteId: site.id, siteName: site.name, windows: [], requests: [], reasons: [], usable: null };
  const track = buildTrack(estimate, site.location, grid.startMs, grid.endMs, TRACK_STEP_MIN, trackRows);
  const timeline = input.skyTimeline?.(site, grid.startMs, grid.endMs) ?? buildSkyTimeline(site, new Date(grid.startMs), new Date(grid.endMs));
  const found = observableWindows(site, new Date(startMs), new Date(endMs), track.targetAt, { timeline });
  out.windows = found.windows.map((w) => ({
    start: w.start.toISOString(),
    end: w.end.toISOString(),
    durationMin: r(w.durationMin, 1),
    opensBecause: w.starts.detail,
    closesBecause: w.ends.detail,
  }));
  if (found.windows.length === 0) {
    out.reasons = noWindowReasons(found.reasons, track, site, horizonH);
    return out;
  }
  if (track.rows.every((row) => row.mag === null)) {
    out.reasons = ['no predicted magnitude (H unknown): brightness and exposures cannot be planned'];
    return out;
  }
  const summary = estimate.summary;
  const hP50 = summary.hMag?.p50 ?? null;
  const diameter = summary.diameterM === null ? undefined : { minM: summary.diameterM.min, maxM: summary.diameterM.max };

  // Candidates per window, and the brightness test per kind at each.
  const perWindow = found.windows.map((w) => {
    const windowS = (w.end.getTime() - w.start.getTime()) / 1000;
    const make = (tMs: number): Omit<Candidate, 'bright'> => ({ tMs, c: conditionsAt(site, timeline, track, tMs, diameter) });
    // Candidate times on whole steps of UTC (not of `now`), so replans ten minutes apart weigh the same
    // times and a kind near a threshold is not proposed and dropped by turns.
    const gridOriginMs = Math.floor(startMs / track.stepMs) * track.stepMs;
    const base = candidatesIn(w, track.stepMs, gridOriginMs, (t) => ({ ...make(t), bright: { feasible: false, kind: 'photometry', reason: '', figures: {} } }));
    const byKind = new Map<RequestKind, Candidate[]>();
    for (const kind of REQUEST_KINDS) {
      if (kind === 'spectrum' && site.spectrograph === undefined) continue;
      byKind.set(kind, base.map((b) => ({ ...b, bright: planAt(kind, site, b.c, windowS) })));
    }
    return { w, windowS, byKind };
  });

  // The observable future for urgency: runs of times where some kind is feasible.
  const usefulRuns = perWindow.map(({ w, byKind }) => {
    const kinds = [...byKind.values()];
    const merged = (kinds[0] ?? []).map((cand, i) => ({ ...cand, bright: kinds.map((list) => list[i]!.bright).find((b) => b.feasible) ?? cand.bright }));
    return brightRuns(w, merged, 'any request');
  });
  const feasibleWindows = usefulRuns.filter((runs) => runs.length > 0).length;
  const lastRun = usefulRuns.flat().at(-1);
  const firstRun = usefulRuns.flat()[0];
  if (firstRun !== undefined && lastRun !== undefined) out.usable = { from: new Date(firstRun.startMs).toISOString(), until: new Date(lastRun.endMs).toISOString() };
  const hoursLeft = lastRun === undefined ? 0 : lastRun.endMs >= endMs ? horizonH : (lastRun.endMs - startMs) / 3_600_000;

  const lightCurve = lightCurveLength(
    summary.diameterM === null ? null : likelyDiameterM(summary.diameterM.min, summary.diameterM.max),
    lightCurveBoundsOf(site),
  );
  const choices: KindChoice[] = [];
  let followOnMissing: string | null = null;
  for (const kind of REQUEST_KINDS) {
    if (kind === 'spectrum' && site.spectrograph === undefined) {
      out.reasons.push('spectrum: no spectrograph at this site');
      continue;
    }
    const lengthS = kind === 'photometry' ? lightCurve.firstS : null;
    const found = chooseWindow(kind, site, perWindow, lengthS, lightCurve.minS);
    if (found.choice === null) {
      out.reasons.push(`${kind}: ${found.failure ?? faintReason(kind, site, perWindow.flatMap((p) => (p.byKind.get(kind) ?? []).map((cand) => ({ cand, windowS: p.windowS }))))}`);
      continue;
    }
    if (kind !== 'photometry') {
      choices.push(found.choice);
      continue;
    }
    // More light curve worth taking than one request may hold: a follow-on in a later window.
    const later = lightCurve.followOnS > 0 ? perWindow.filter((p) => p.w.start.getTime() >= found.choice!.window.end.getTime()) : [];
    const followOn = later.length > 0 ? chooseWindow(kind, site, later, lightCurve.followOnS, lightCurve.minS).choice : null;
    const parts = followOn === null ? 1 : 2;
    choices.push({ ...found.choice, lightCurve: { length: lightCurve, part: 1, parts } });
    if (followOn !== null) choices.push({ ...followOn, lightCurve: { length: lightCurve, part: 2, parts } });
    else if (lightCurve.followOnS > 0)
      followOnMissing = `photometry: a follow-on light curve of ${fmt(lightCurve.followOnS / 60)} min is worth taking, but no later window in the next ${fmt(horizonH)} h fits it`;
  }

  const fieldArcsec = Math.min(site.imager.fieldArcmin.width, site.imager.fieldArcmin.height) * 60;
  const exact = exactRows(source, site, choices, track);
  for (const choice of choices) {
    const p = choice.recommended.c.point;
    const extent = uncertaintyExtent(p);
    let pattern: SearchPattern | null = null;
    if (extent !== null && extent > fieldArcsec) {
      const across = `3-sigma region ${fmt(extent)} arcsec across exceeds the imager field ${fmt(fieldArcsec)} arcsec`;
      if (choice.kind !== 'photometry') {
        out.reasons.push(`${choice.kind}: ${across}: the object must be found first`);
        continue;
      }
      const candidate = searchPattern({ raDeg: p.ra, decDeg: p.dec, majorArcsec: p.uncMajor ?? 0, minorArcsec: p.uncMinor ?? 0, paDeg: p.uncPa ?? 0, fieldArcsec });
      if (candidate.pointings.length > maxPointings) {
        out.reasons.push(`${choice.kind}: ${across}; covering it would take ${candidate.pointings.length} pointings (more than ${maxPointings}): needs astrometry first`);
        continue;
      }
      pattern = candidate;
    }
    if (choice.kind === 'spectrum' && site.spectrograph !== undefined && extent !== null && extent > site.spectrograph.acquisitionFieldArcsec) {
      out.reasons.push(`spectrum: 3-sigma region ${fmt(extent)} arcsec across exceeds the acquisition field ${fmt(site.spectrograph.acquisitionFieldArcsec)} arcsec`);
      continue;
    }
    out.requests.push(buildRequest(input, site, choice, pattern, exact, { feasibleWindows, hoursLeft, hP50 }, weights));
  }
  if (followOnMissing !== null && out.requests.some((q) => q.kind === 'photometry')) out.reasons.push(followOnMissing);
  if (out.requests.length === 0 && out.reasons.length === 0) out.reasons.push('no request could be built');
  return out;
}

/** "too faint: V 22.4 at best, limit 20.8" from the brightest candidate, else the photometry module's own reason. */
function faintReason(kind: RequestKind, site: Site, cands: { cand: Candidate; windowS: number }[]): string {
  const withMag = cands.filter((x) => x.cand.c.observing !== null);
  if (withMag.length === 0) return 'no predicted magnitude inside the windows';
  const best = withMag.reduce((a, b) => (b.cand.c.observing!.vMag + 0.2 * b.cand.c.airmass < a.cand.c.observing!.vMag + 0.2 * a.cand.c.airmass ? b : a));
  const v = best.cand.c.observing!.vMag;
  const limit = limitingV(kind, site, best.cand.c, best.windowS);
  if (limit === null || limit >= v) {
    return `not feasible at the best time: ${best.cand.bright.feasible ? 'the sequence does not fit the window' : best.cand.bright.reason}`;
  }
  return `too faint: V ${v.toFixed(1)} at best, limit ${limit.toFixed(1)} (airmass ${best.cand.c.airmass.toFixed(2)}, sky V ${best.cand.c.skyV.toFixed(1)} mag/arcsec^2)`;
}

function tableTimesMs(choice: KindChoice): number[] {
  const times: number[] = [];
  for (let t = choice.startMs; t < choice.endMs; t += TABLE_STEP_MIN * MS_PER_MIN) times.push(t);
  times.push(choice.endMs);
  return times;
}

/**
 * Below this sky rate the track's Hermite interpolation (20-minute samples with their rates)
 * matches a fresh ensemble ephemeris to about a milliarcsecond (measured on the simulated night),
 * so the request tables are taken from the track instead of propagating the ensemble again.
 */
export const TRACK_TABLE_MAX_RATE_ARCSEC_PER_S = 2;

/** Rows at every recommended start and table time of the chosen requests: from the track when it moves slowly, else from the track source's estimate. */
function exactRows(source: TrackSource, site: Site, choices: KindChoice[], track: Track): Map<number, EphemerisRow> {
  const wanted = [...new Set(choices.flatMap((c) => [c.recommended.tMs, ...tableTimesMs(c)]))].sort((a, b) => a - b);
  const byTime = new Map<number, EphemerisRow>();
  if (wanted.length === 0) return byTime;
  if (track.maxRateArcsecPerS(wanted[0]!, wanted[wanted.length - 1]!) < TRACK_TABLE_MAX_RATE_ARCSEC_PER_S) {
    for (const t of wanted) byTime.set(t, track.rowAt(t));
    return byTime;
  }
  // Positions fresh at every row; the uncertainty every third row (5-minute tables), filled in where it changes fast.
  const rows = source.rowsAt(site.location, wanted);
  wanted.forEach((t, i) => {
    const row = rows[i];
    if (row === undefined) throw new PlanningInputError('estimate.ephemeris', rows.length, `expected ${wanted.length} rows, one per requested time`);
    byTime.set(t, row);
  });
  return byTime;
}

function buildRequest(
  input: PlanObjectInput,
  site: Site,
  choice: KindChoice,
  pattern: SearchPattern | null,
  exact: Map<number, EphemerisRow>,
  future: { feasibleWindows: number; hoursLeft: number; hP50: number | null },
  weights: ScoreWeights,
): PlannedRequest {
  const { estimate } = input;
  const rec = choice.recommended;
  const plan = choice.plan;
  const searchS = pattern === null ? 0 : pattern.pointings.length * (Math.min(60, plan.steps[0]?.exposureS ?? 30) + site.imager.readoutS);
  const durationS = Math.round(plan.totalS + searchS);
  const atStart = exact.get(rec.tMs)!;
  const table = tableTimesMs(choice).map((t) => tableRow(exact.get(t)!));
  // Without an airmass limit, the airmass at the lowest allowed altitude.
  const maxAirmass = site.limits.maxAirmass ?? airmassKastenYoung(Math.max(site.limits.minAltitudeDeg, 1));
  const summary = estimate.summary;
  const limitV = limitingV(choice.kind, site, rec.c, choice.planWindowS);
  const vMag = rec.c.observing?.vMag ?? Number.NaN;
  const marginMag = limitV === null ? 0 : Math.max(0, limitV - vMag);
  const score = scoreRequest(
    {
      horizonH: input.horizonH,
      feasibleWindows: Math.max(1, future.feasibleWindows),
      hoursLeft: future.hoursLeft,
      hMag: future.hP50,
      minDistanceLunar: summary.minGeocentricDistance.lunarDistances.p50,
      nearEarthFraction: summary.classFractions.neo,
      marginMag,
      limitingVMag: limitV,
      windowS: (choice.endMs - choice.startMs) / 1000,
      sequenceS: plan.totalS,
      airmass: Math.max(1, rec.c.airmass),
      maxAirmass,
      hoursSinceDiscovery: (input.now.getTime() - Date.parse(estimate.firstObservedAt)) / 3_600_000,
    },
    weights,
  );
  const iso = (ms: number) => new Date(ms).toISOString();
  const extent = uncertaintyExtent(rec.c.point);
  const body: RequestBody = {
    format: REQUEST_FORMAT,
    objectId: estimate.objectId,
    siteId: site.id,
    kind: choice.kind,
    plannedAtUtc: input.now.toISOString(),
    windowStartUtc: iso(choice.startMs),
    windowEndUtc: iso(choice.endMs),
    windowOpensBecause: choice.opensBecause,
    windowClosesBecause: choice.closesBecause,
    recommendedStartUtc: iso(rec.tMs),
    expectedDurationS: durationS,
    expiresAtUtc: iso(choice.endMs),
    target: {
      raDeg: r(atStart.ra, 6),
      decDeg: r(atStart.dec, 6),
      vMag: r(vMag, 2),
      limitingVMag: limitV === null ? null : r(limitV, 2),
      vMagSigma: rec.c.point.magSigma === null ? null : r(rec.c.point.magSigma, 2),
      uncertainty1Sigma: atStart.unc === null ? null : { majorArcsec: r(atStart.unc.major, 1), minorArcsec: r(atStart.unc.minor, 1), paDeg: r(atStart.unc.pa, 1) },
      region3SigmaAcrossArcsec: extent === null ? null : r(extent, 1),
    },
    sequence: sequenceOf(plan),
    ...(choice.lightCurve === undefined
      ? {}
      : {
          lightCurve: {
            likelyDiameterM: choice.lightCurve.length.likelyDiameterM === null ? null : r(choice.lightCurve.length.likelyDiameterM, 1),
            longestPlausiblePeriodS: choice.lightCurve.length.longestPeriodS,
            periodBasis: choice.lightCurve.length.basis,
            wantedS: choice.lightCurve.length.wantedS,
            boundsS: { min: choice.lightCurve.length.minS, max: choice.lightCurve.length.maxS },
            sequenceS: r(plan.totalS, 0),
            part: choice.lightCurve.part,
            parts: choice.lightCurve.parts,
            followOnS: choice.lightCurve.part === 1 && choice.lightCurve.parts === 2 ? choice.lightCurve.length.followOnS : 0,
          },
        }),
    tracking: {
      mode: 'non-sidereal',
      atUtc: iso(rec.tMs),
      raRateArcsecPerS: r(atStart.raRate, 4),
      decRateArcsecPerS: r(atStart.decRate, 4),
      totalRateArcsecPerS: r(Math.hypot(atStart.raRate, atStart.decRate), 4),
    },
    conditionsAtStart: { altitudeDeg: r(rec.c.altDeg, 2), airmass: r(rec.c.airmass, 3), skyVMagPerArcsec2: r(rec.c.skyV, 2), moonSeparationDeg: r(rec.c.moonSepDeg, 1) },
    searchPattern: pattern,
    ephemeris: { stepMin: TABLE_STEP_MIN, frame: 'astrometric ICRS, topocentric at the site', units: TABLE_UNITS, rows: table },
    score,
    assessment: {
      method: summary.method,
      members: summary.members,
      firstObservedAtUtc: estimate.firstObservedAt,
      hMagP50: future.hP50 === null ? null : r(future.hP50, 2),
      diameterM: summary.diameterM === null ? null : { min: r(summary.diameterM.min, 1), max: r(summary.diameterM.max, 1) },
      nearEarthFraction: summary.classFractions.neo,
      closeApproach: summary.closeApproach,
      minDistanceLunarP50: r(summary.minGeocentricDistance.lunarDistances.p50, 2),
      notes: summary.notes,
      ...(input.firstLook ? { firstLook: true as const } : {}),
    },
  };
  return {
    siteId: site.id,
    kind: choice.kind,
    night: localNightOf(new Date(choice.startMs), site.location.lonDeg),
    score: score.total,
    windowStart: body.windowStartUtc,
    windowEnd: body.windowEndUtc,
    recommendedStart: body.recommendedStartUtc,
    expiresAt: body.expiresAtUtc,
    durationS,
    body,
  };
}
