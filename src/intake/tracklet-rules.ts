import type { ValidationIssue } from '../config/issues.js';

/**
 * The rules a tracklet must keep, checked on one notice and again on the
 * object's merged tracklet when a notice adds to it: its span, its number of
 * positions, and no two positions at the same time from the same place that
 * disagree by more than CONFLICT_SIGMA combined sigma.
 *
 * MAX_ARC_DAYS and MAX_OBJECT_OBSERVATIONS are intake limits on what one
 * assessment is given: the short-arc estimate's cost grows with the span and
 * faster than linearly with the positions (README "Intake limits";
 * test/bench/intake-limits.bench.ts measures it).
 */

/** Positions in one object's merged tracklet. */
export const MAX_OBJECT_OBSERVATIONS = 200;
/** Days from the first to the last position of one object's tracklet. */
export const MAX_ARC_DAYS = 10;
/** Two positions of one object at the same time from the same place that differ by more than this many combined sigma are refused. */
export const CONFLICT_SIGMA = 5;

/** One position as the rules see it (degrees, arcsec, ISO UTC time, observer in degrees and metres). */
export interface RulePosition {
  t: string;
  raDeg: number;
  decDeg: number;
  sigmaArcsec: number;
  obsLatDeg: number;
  obsLonDeg: number;
  obsHeightM: number;
  /** How to name it in a refusal, e.g. `observations[3]` or `stored position 2027-03-04T04:12:33.120Z of notice ex-0001`. */
  label: string;
}

const MS_PER_DAY = 86_400_000;
const DEG = Math.PI / 180;
const ARCSEC_PER_DEG = 3600;

/**
 * Great-circle separation of two directions, arcsec: the haversine formula
 * (R. W. Sinnott, "Virtues of the Haversine", Sky & Telescope 68, 159, 1984),
 * well conditioned at small angles. Inputs RA and Dec in degrees, any frame
 * shared by both; valid for all separations (0-180 deg).
 */
export function separationArcsec(ra1Deg: number, dec1Deg: number, ra2Deg: number, dec2Deg: number): number {
  const sinDDec = Math.sin(((dec2Deg - dec1Deg) * DEG) / 2);
  const sinDRa = Math.sin(((ra2Deg - ra1Deg) * DEG) / 2);
  const h = sinDDec * sinDDec + Math.cos(dec1Deg * DEG) * Math.cos(dec2Deg * DEG) * sinDRa * sinDRa;
  return (2 * Math.asin(Math.min(1, Math.sqrt(h))) * ARCSEC_PER_DEG) / DEG;
}

function placeKey(p: RulePosition): string {
  return `${Date.parse(p.t)}|${p.obsLatDeg}|${p.obsLonDeg}|${p.obsHeightM}`;
}

function describeSeparation(arcsec: number): string {
  return arcsec >= 3600 ? `${(arcsec / 3600).toFixed(2)} deg` : `${arcsec.toFixed(1)} arcsec`;
}

/**
 * Positions of `incoming` that share a time and a place with an earlier one
 * (in `earlier`, then in `incoming` itself) and disagree with it by more than
 * CONFLICT_SIGMA x sqrt(sigma1^2 + sigma2^2); each refusal names both. Agreeing
 * ones are duplicates, merged as one by the store.
 */
export function sameTimeConflicts(earlier: readonly RulePosition[], incoming: readonly RulePosition[], path: (index: number) => string): ValidationIssue[] {
  const seen = new Map<string, RulePosition[]>();
  const add = (p: RulePosition) => seen.set(placeKey(p), [...(seen.get(placeKey(p)) ?? []), p]);
  earlier.forEach(add);
  const issues: ValidationIssue[] = [];
  incoming.forEach((p, index) => {
    for (const q of seen.get(placeKey(p)) ?? []) {
      const sep = separationArcsec(q.raDeg, q.decDeg, p.raDeg, p.decDeg);
      const limit = CONFLICT_SIGMA * Math.hypot(p.sigmaArcsec, q.sigmaArcsec);
      if (sep > limit) {
        issues.push({
          path: path(index),
          message: `${p.label} and ${q.label} are at the same time (${p.t}) from the same place but ${describeSeparation(sep)} apart, more than ${CONFLICT_SIGMA} sigma (${limit.toFixed(1)} arcsec); send one of them`,
        });
        break;
      }
    }
    add(p);
  });
  return issues;
}

/**
 * The merged tracklet's span and size against MAX_ARC_DAYS and
 * MAX_OBJECT_OBSERVATIONS; `subject` names it in the refusal (e.g. `the
 * notice`, `object ZX27A01`). Positions of `incoming` at a stored time and place
 * are duplicates and not counted.
 */
export function mergedTrackletIssues(stored: readonly RulePosition[], incoming: readonly RulePosition[], subject: string): ValidationIssue[] {
  const issues: ValidationIssue[] = [];
  const keys = new Set(stored.map(placeKey));
  const added = incoming.filter((p) => {
    const k = placeKey(p);
    if (keys.has(k)) return false;
    keys.add(k);
    return true;
  }).length;
  const total = stored.length + added;
  const with_ = stored.length > 0 ? ` with this notice (${stored.length} stored + ${added} new)` : '';
  if (total > MAX_OBJECT_OBSERVATIONS) {
    issues.push({ path: 'observations', message: `${subject} would hold ${total} positions${with_}; at most ${MAX_OBJECT_OBSERVATIONS} per object` });
  }
  const times = [...stored, ...incoming].map((p) => Date.parse(p.t));
  if (times.length > 1) {
    const spanDays = (Math.max(...times) - Math.min(...times)) / MS_PER_DAY;
    if (spanDays > MAX_ARC_DAYS) {
      issues.push({
        path: 'observations',
        message: `${subject} would span ${spanDays.toFixed(1)} days from first to last position${stored.length > 0 ? ' with this notice' : ''}; at most ${MAX_ARC_DAYS} days per object`,
      });
    }
  }
  return issues;
}
