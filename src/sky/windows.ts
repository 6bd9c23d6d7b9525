import type { Site } from '../config/schema.js';
import { SkyInputError, requireDate, requireFinite } from './errors.js';
import {
  LIMIT_ORDER,
  checkTargetState,
  evaluateLimitsInSky,
  horizonMaskMaxSlope,
  prepareLimits,
  type LimitCheck,
  type LimitName,
  type LimitReport,
  type MarginUnit,
  type TargetState,
} from './limits.js';
import { buildSkyTimeline, skyFromTimeline, type SkyTimeline } from './timeline.js';

/**
 * Observable windows: the intervals in [start, end] where every hard limit holds.
 *
 * Method: sample on a coarse grid (default 10 min); between two samples, refine by halving
 * wherever a limit could change sign inside the gap, judged from the margins at both ends and
 * an upper bound on how fast each margin can change (Earth rotation 15.04 deg/h, the target's
 * own motion, the Moon's motion: a Lipschitz bound); then bisect each pass/fail change to
 * `precisionS` (default 30 s), keeping the passing side as the window edge. Every window edge
 * is therefore a time that passes, within `precisionS` of the true crossing, and labelled with
 * the limit that fails just outside it.
 *
 * The site's sky (frame, Sun, Moon) comes from a timeline of exact nodes every 20 min with
 * interpolation between them (timeline.ts); build it once per site with `buildSkyTimeline`
 * and pass it in `options.timeline` for many targets. Window samples must pass each limit by a
 * small guard margin (0.003 deg, 0.0002 h) that covers the interpolation error, so a window
 * time also passes the exact `evaluateLimits`. Windows shorter than the refinement can resolve
 * (about 30 s) may be missed.
 */

const MS_PER_MIN = 60_000;
const MAX_SPAN_DAYS = 10;
/** Upper bound on the rate of change of an altitude or separation from Earth rotation, deg/min (15.04 deg/h + slack). */
const ROTATION_DEG_PER_MIN = 0.2515;
/** Upper bound on the Moon's apparent motion against the stars, including topocentric parallax change, deg/min. */
const MOON_DEG_PER_MIN = 0.02;
/** Upper bound on the Sun's motion against the stars, deg/min. */
const SUN_DEG_PER_MIN = 0.0008;
/** Shortest gap the refinement will split, ms: below it, the samples decide. */
const MIN_REFINE_MS = 30_000;

export type TargetAt = (timeUtc: Date) => TargetState;

export interface WindowOptions {
  /** Coarse sampling step, minutes (1..30, default 10). */
  stepMinutes?: number;
  /** Edge precision, seconds (1..60, default 30): edges are within this of the true crossing. */
  precisionS?: number;
  /** The site's sky prepared once for many targets (buildSkyTimeline); must cover [start, end]. Built here when absent. */
  timeline?: SkyTimeline;
}

export interface WindowEdge {
  /** The limit that binds at this edge ('interval' when the requested interval ends first). */
  limit: LimitName | 'interval';
  /** Every limit failing just outside the edge, in LIMIT_ORDER. */
  limits: Array<LimitName | 'interval'>;
  /** e.g. 'altitude reaches 25 deg' or 'dawn: Sun at -12 deg'. */
  detail: string;
}

export interface ObservableWindow {
  start: Date;
  end: Date;
  durationMin: number;
  starts: WindowEdge;
  ends: WindowEdge;
}

export interface WindowsResult {
  windows: ObservableWindow[];
  /** Why there is no window, with numbers (empty when there are windows). */
  reasons: string[];
  /** Number of limit evaluations made (coarse + refinement + bisection). */
  evaluations: number;
}

function checkInterval(startUtc: Date, endUtc: Date, stepMinutes: number): { startMs: number; endMs: number; stepMs: number } {
  requireDate('startUtc', startUtc);
  requireDate('endUtc', endUtc);
  requireFinite('stepMinutes', stepMinutes, 1, 30);
  const startMs = startUtc.getTime();
  const endMs = endUtc.getTime();
  if (endMs <= startMs) throw new SkyInputError('endUtc', endUtc, `must be after startUtc ${startUtc.toISOString()}`);
  if (endMs - startMs > MAX_SPAN_DAYS * 86_400_000) {
    throw new SkyInputError('endUtc', endUtc, `the interval may span at most ${MAX_SPAN_DAYS} days`);
  }
  return { startMs, endMs, stepMs: stepMinutes * MS_PER_MIN };
}

/**
 * Margins a window sample must exceed, per unit: they cover the sky timeline's interpolation
 * error (< 0.002 deg, see timeline.ts), so a window time also passes the exact evaluateLimits.
 */
const GUARD: Record<MarginUnit, number> = { deg: 0.003, h: 0.0002, 'arcsec/s': 0 };

function passesWithGuard(report: LimitReport): boolean {
  return report.checks.every((c) => c.margin >= GUARD[c.unit]);
}

interface Sample {
  t: number;
  target: TargetState;
  report: LimitReport;
  /** Passes every limit by at least the guard margin. */
  ok: boolean;
}

const DEG = Math.PI / 180;

/** Angle between two RA/Dec positions, degrees (haversine). */
function separationDeg(a: TargetState, b: TargetState): number {
  const dDec = (b.decDeg - a.decDeg) * DEG;
  const dRa = (b.raDeg - a.raDeg) * DEG;
  const h = Math.sin(dDec / 2) ** 2 + Math.cos(a.decDeg * DEG) * Math.cos(b.decDeg * DEG) * Math.sin(dRa / 2) ** 2;
  return (2 * Math.asin(Math.min(1, Math.sqrt(h)))) / DEG;
}

const rateDegPerMin = (t: TargetState) => (Math.hypot(t.raRateArcsecPerS ?? 0, t.decRateArcsecPerS ?? 0) * 60) / 3600;

/**
 * Upper bounds on |d margin / dt| over the gap between two samples, per limit, in the margin's unit
 * per minute. The target's own motion is the larger of its stated rates and 1.5 x the motion seen
 * between the two samples (so a target given without rates is still bounded).
 */
function gapSlopes(site: Site, a: Sample, b: Sample, maskSlope: number): (limit: LimitName) => number {
  const dtMin = (b.t - a.t) / MS_PER_MIN;
  const motion = Math.max(rateDegPerMin(a.target), rateDegPerMin(b.target), (1.5 * separationDeg(a.target, b.target)) / dtMin);
  const altRate = ROTATION_DEG_PER_MIN + motion;
  const highestAlt = Math.max(a.report.target.altDeg, b.report.target.altDeg) + altRate * dtMin;
  const cosAlt = Math.max(Math.cos(Math.min(highestAlt, 90) * DEG), 0.02);
  const cosDec = Math.max(Math.min(Math.cos(a.target.decDeg * DEG), Math.cos(b.target.decDeg * DEG)), 0.02);
  const haRange = site.limits.hourAngleH.max - site.limits.hourAngleH.min;
  const rateMargin = (s: Sample) => s.report.checks.find((c) => c.limit === 'maxRate')?.margin ?? 0;
  return (limit) => {
    switch (limit) {
      case 'night':
        return ROTATION_DEG_PER_MIN;
      case 'sunAvoidance':
        return motion + SUN_DEG_PER_MIN;
      case 'minAltitude':
      case 'maxAirmass':
      case 'zenithKeepOut':
        return altRate;
      case 'horizonMask':
        // Altitude rate plus the mask's slope times the azimuth rate (<= altitude rate / cos alt).
        return altRate * (1 + maskSlope / cosAlt);
      case 'hourAngle':
        // A full 24 h range never fails; its margin only touches 0 at the +-12 h wrap.
        return haRange >= 24 ? 0 : 1.0028 / 60 + motion / cosDec / 15;
      case 'declination':
        return motion;
      case 'moonSeparation':
        // Scaled limit: the illuminated fraction changes by < 0.0003 per minute.
        return motion + MOON_DEG_PER_MIN + 0.0003 * site.limits.minMoonSeparationDeg;
      case 'maxRate':
        // Rates are only known at samples: assume they change at most twice as fast as seen between them.
        return (2 * Math.abs(rateMargin(b) - rateMargin(a))) / dtMin;
    }
  };
}

/** Fraction of the proven hold time used when striding, for safety. */
const HOLD_SAFETY = 0.9;

/**
 * How long a failing sample provably keeps failing, minutes: the night limit (Sun altitude changes
 * at most 0.2515 deg/min) and, for targets that state their rates, the altitude limit. 0 if passing.
 */
function failingHoldMinutes(s: Sample): number {
  if (s.ok) return 0;
  let hold = 0;
  const hasRates = s.target.raRateArcsecPerS !== undefined || s.target.decRateArcsecPerS !== undefined;
  for (const c of s.report.checks) {
    if (c.margin >= GUARD[c.unit]) continue;
    let slope = 0;
    if (c.limit === 'night') slope = ROTATION_DEG_PER_MIN;
    else if (c.limit === 'minAltitude' && hasRates) slope = ROTATION_DEG_PER_MIN + rateDegPerMin(s.target);
    if (slope > 0) hold = Math.max(hold, (HOLD_SAFETY * (GUARD[c.unit] - c.margin)) / slope);
  }
  return hold;
}

/** Whether some limit's state could differ somewhere strictly inside (a, b), given both margins and rate bounds. */
function mayChangeInside(site: Site, a: Sample, b: Sample, maskSlope: number): boolean {
  const dtMin = (b.t - a.t) / MS_PER_MIN;
  const slopeOf = gapSlopes(site, a, b, maskSlope);
  for (const ca of a.report.checks) {
    const cb = b.report.checks.find((c) => c.limit === ca.limit);
    if (cb === undefined) continue;
    const slope = slopeOf(ca.limit);
    if (slope === 0) continue;
    const guard = GUARD[ca.unit];
    const okA = ca.margin >= guard;
    const okB = cb.margin >= guard;
    if (okA && okB) {
      // Lowest possible margin inside the gap.
      if ((ca.margin + cb.margin - slope * dtMin) / 2 < guard) return true;
    } else if (!okA && !okB) {
      // Highest possible margin inside the gap.
      if ((ca.margin + cb.margin + slope * dtMin) / 2 >= guard) return true;
    }
  }
  return false;
}

function failingChecks(report: LimitReport): LimitCheck[] {
  return LIMIT_ORDER.flatMap((name) => report.checks.filter((c) => c.limit === name && c.margin < GUARD[c.unit]));
}

/** Words for an edge where `check` stops failing (opening) or starts failing (closing). */
function edgeWords(check: LimitCheck, opening: boolean, site: Site): string {
  const l = site.limits;
  switch (check.limit) {
    case 'night':
      return opening ? `dusk: Sun at ${l.nightSunAltitudeDeg} deg` : `dawn: Sun at ${l.nightSunAltitudeDeg} deg`;
    case 'sunAvoidance':
      return opening ? `Sun separation reaches ${l.sunAvoidanceDeg} deg` : `Sun separation falls below ${l.sunAvoidanceDeg} deg`;
    case 'minAltitude':
      return opening ? `altitude reaches ${l.minAltitudeDeg} deg` : `altitude falls below ${l.minAltitudeDeg} deg`;
    case 'horizonMask':
      return opening ? `rises clear of the horizon mask (${check.detail})` : `goes behind the horizon mask (${check.detail})`;
    case 'maxAirmass':
      return opening ? `airmass falls to ${l.maxAirmass ?? ''}` : `airmass rises above ${l.maxAirmass ?? ''}`;
    case 'zenithKeepOut':
      return opening
        ? `leaves the zenith keep-out (above ${90 - l.zenithKeepOutDeg} deg)`
        : `enters the zenith keep-out (above ${90 - l.zenithKeepOutDeg} deg)`;
    case 'hourAngle':
      return opening ? `hour angle reaches ${l.hourAngleH.min} h` : `hour angle passes ${l.hourAngleH.max} h`;
    case 'declination':
      return opening
        ? `declination enters ${l.decDeg.min}..${l.decDeg.max} deg`
        : `declination leaves ${l.decDeg.min}..${l.decDeg.max} deg`;
    case 'moonSeparation':
      return opening ? `Moon separation reaches the limit (${check.detail})` : `Moon separation falls below the limit (${check.detail})`;
    case 'maxRate':
      return opening ? `rate drops to ${l.maxRateArcsecPerS} arcsec/s` : `rate exceeds ${l.maxRateArcsecPerS} arcsec/s`;
  }
}

function edgeFrom(outside: LimitReport | null, opening: boolean, site: Site): WindowEdge {
  if (outside === null) {
    return {
      limit: 'interval',
      limits: ['interval'],
      detail: opening ? 'start of the requested interval' : 'end of the requested interval',
    };
  }
  const failing = failingChecks(outside);
  const first = failing[0];
  if (first === undefined) {
    // Cannot happen: the outside sample fails by construction. Keep a truthful label anyway.
    return { limit: 'interval', limits: ['interval'], detail: 'limit change between samples' };
  }
  return { limit: first.limit, limits: failing.map((c) => c.limit), detail: edgeWords(first, opening, site) };
}

/** Why no time passed: for each limit that never held (within the dark time where relevant), the best value seen. */
function emptyReasons(site: Site, samples: Sample[]): string[] {
  const l = site.limits;
  const night = samples.filter((s) => s.report.checks.some((c) => c.limit === 'night' && c.ok));
  if (night.length === 0) {
    const lowest = Math.min(...samples.map((s) => s.report.sun.altDeg));
    return [`no night in the interval: the Sun never gets below ${l.nightSunAltitudeDeg} deg (lowest ${lowest.toFixed(1)} deg)`];
  }
  const best = (name: LimitName): LimitCheck | undefined => {
    let top: LimitCheck | undefined;
    for (const s of night) {
      const c = s.report.checks.find((x) => x.limit === name);
      if (c !== undefined && (top === undefined || c.margin > top.margin)) top = c;
    }
    return top;
  };
  const maxOf = (f: (r: LimitReport) => number) => Math.max(...night.map((s) => f(s.report)));
  const reasons: string[] = [];
  for (const name of LIMIT_ORDER) {
    if (name === 'night') continue;
    const b = best(name);
    if (b === undefined || b.ok) continue;
    switch (name) {
      case 'minAltitude':
        reasons.push(`never above ${l.minAltitudeDeg} deg during the night: highest altitude ${maxOf((r) => r.target.altDeg).toFixed(1)} deg`);
        break;
      case 'sunAvoidance':
        reasons.push(`always within ${l.sunAvoidanceDeg} deg of the Sun during the night: largest separation ${maxOf((r) => r.sun.separationDeg).toFixed(1)} deg`);
        break;
      case 'maxAirmass':
        reasons.push(`never below airmass ${l.maxAirmass ?? ''} during the night: best ${b.detail}`);
        break;
      case 'moonSeparation':
        reasons.push(`always too close to the Moon during the night: best ${b.detail}`);
        break;
      case 'horizonMask':
        reasons.push(`never clear of the horizon mask during the night: best ${b.detail}`);
        break;
      case 'zenithKeepOut':
        reasons.push(`always inside the zenith keep-out during the night: best ${b.detail}`);
        break;
      case 'hourAngle':
        reasons.push(`never within hour angle ${l.hourAngleH.min}..${l.hourAngleH.max} h during the night: best ${b.detail}`);
        break;
      case 'declination':
        reasons.push(`declination outside ${l.decDeg.min}..${l.decDeg.max} deg throughout the night: best ${b.detail}`);
        break;
      case 'maxRate':
        reasons.push(`always faster than ${l.maxRateArcsecPerS} arcsec/s during the night: best ${b.detail}`);
        break;
    }
  }
  if (reasons.length === 0) {
    // Each limit holds at some time, but never all at once.
    const parts = LIMIT_ORDER.filter((n) => n !== 'night').flatMap((name) => {
      const n = night.filter((s) => s.report.checks.some((c) => c.limit === name && !c.ok)).length;
      return n > 0 ? [`${name} fails at ${n} of ${night.length} night samples`] : [];
    });
    reasons.push(`the limits never hold at the same time during the night: ${parts.join('; ')}`);
  }
  return reasons;
}

/**
 * Observable windows of a moving target at a site in [startUtc, endUtc] (see the module note for
 * the method). `targetAt(t)` gives the target's astrometric ICRS RA/Dec (degrees) seen from the
 * site and optionally its rates (arcsec/s, RA rate x cos Dec). Windows never contain a sampled
 * or bisected time that violates a limit, and each edge is within `precisionS` of the crossing.
 */
export function observableWindows(
  site: Site,
  startUtc: Date,
  endUtc: Date,
  targetAt: TargetAt,
  options: WindowOptions = {},
): WindowsResult {
  const stepMinutes = options.stepMinutes ?? 10;
  const { startMs, endMs, stepMs } = checkInterval(startUtc, endUtc, stepMinutes);
  const precisionMs = requireFinite('precisionS', options.precisionS ?? 30, 1, 60) * 1000;
  if (typeof targetAt !== 'function') throw new SkyInputError('targetAt', targetAt, 'expected a function of time');
  const timeline = options.timeline ?? buildSkyTimeline(site, startUtc, endUtc);
  if (timeline.siteId !== site.id || timeline.startMs > startMs || timeline.endMs < endMs) {
    throw new SkyInputError('timeline', timeline.siteId, `does not cover site ${site.id} from ${startUtc.toISOString()} to ${endUtc.toISOString()}`);
  }
  const maskSlope = horizonMaskMaxSlope(site.limits);
  const prepared = prepareLimits(site);
  let evaluations = 0;

  const sampleAt = (t: number): Sample => {
    const when = new Date(t);
    const target = checkTargetState(targetAt(when), `targetAt(${when.toISOString()})`);
    const report = evaluateLimitsInSky(site, skyFromTimeline(timeline, when), target, prepared);
    evaluations++;
    return { t, target, report, ok: passesWithGuard(report) };
  };

  // 1. Coarse grid, striding over time that provably stays failing (daylight, target below the limit).
  const coarse: Sample[] = [];
  const provenFailing = new Set<Sample>(); // the gap after this sample cannot contain a passing time
  for (let t = startMs; ; ) {
    const s = sampleAt(t);
    coarse.push(s);
    if (t >= endMs) break;
    const holdMs = failingHoldMinutes(s) * MS_PER_MIN;
    if (holdMs > stepMs) provenFailing.add(s);
    t = Math.min(t + Math.max(stepMs, Math.floor(holdMs)), endMs);
  }

  // 2. Refine gaps where a limit could change sign between samples.
  const samples: Sample[] = [coarse[0]!];
  const refine = (a: Sample, b: Sample): void => {
    if (b.t - a.t > MIN_REFINE_MS && !provenFailing.has(a) && mayChangeInside(site, a, b, maskSlope)) {
      const mid = sampleAt(Math.round((a.t + b.t) / 2));
      refine(a, mid);
      refine(mid, b);
    } else {
      samples.push(b);
    }
  };
  for (let i = 1; i < coarse.length; i++) refine(coarse[i - 1]!, coarse[i]!);

  // 3. Bisect each pass/fail change; the passing side is the edge.
  const bisect = (pass: Sample, fail: Sample): { edge: Sample; outside: Sample } => {
    let p = pass;
    let f = fail;
    while (Math.abs(f.t - p.t) > precisionMs) {
      const mid = sampleAt(Math.round((p.t + f.t) / 2));
      if (mid.ok) p = mid;
      else f = mid;
    }
    return { edge: p, outside: f };
  };

  const windows: ObservableWindow[] = [];
  let open: { start: Date; starts: WindowEdge } | null = null;
  for (let i = 0; i < samples.length; i++) {
    const s = samples[i]!;
    const prev = i > 0 ? samples[i - 1]! : null;
    if (s.ok && open === null) {
      if (prev === null) open = { start: new Date(s.t), starts: edgeFrom(null, true, site) };
      else {
        const { edge, outside } = bisect(s, prev);
        open = { start: new Date(edge.t), starts: edgeFrom(outside.report, true, site) };
      }
    } else if (!s.ok && open !== null && prev !== null) {
      const { edge, outside } = bisect(prev, s);
      windows.push(closeWindow(open, new Date(edge.t), edgeFrom(outside.report, false, site)));
      open = null;
    }
  }
  if (open !== null) windows.push(closeWindow(open, new Date(endMs), edgeFrom(null, false, site)));

  return { windows, reasons: windows.length === 0 ? emptyReasons(site, samples) : [], evaluations };
}

function closeWindow(open: { start: Date; starts: WindowEdge }, end: Date, ends: WindowEdge): ObservableWindow {
  return { start: open.start, end, durationMin: (end.getTime() - open.start.getTime()) / MS_PER_MIN, starts: open.starts, ends };
}
