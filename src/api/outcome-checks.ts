import { z } from 'zod';
import type { Site } from '../config/schema.js';
import { placeFromTable, sigmaDistance, type TableRowLike } from '../orbit/table-place.js';
import { skyAt } from '../sky/timeline.js';
import type { RequestRow } from '../store/requests.js';

/**
 * The checks an outcome passes before it is believed. Times: an outcome may not
 * be in the future, nor before its lease began, nor far outside its request's
 * window, and a `done` (and every position) must be at a time when the site was
 * dark by its own night limit (the Sun's geometric altitude below
 * `limits.nightSunAltitudeDeg`, the sky module's night test). Positions: each is
 * compared with the request's ephemeris table; one outside the predicted
 * 5-sigma region is kept but held back as a possible misidentification until an
 * operator confirms it. A refused outcome changes nothing.
 */

/** Allowances, minutes: clock differences between the site and the service; how long before the lease an observation may start; how far outside the window. */
export const OUTCOME_SLACK_MIN = Object.freeze({ clock: 2, beforeLease: 5, window: 15 });

/** A position outside this many combined sigma of the prediction is held back. */
export const HOLD_BEYOND_SIGMA = 5;

export interface OutcomePosition {
  t: string;
  ra: number;
  dec: number;
  sigma: number;
  mag?: number | undefined;
  band?: string | undefined;
}

export interface OutcomeIssue {
  path: string;
  message: string;
}

export interface PositionVerdict {
  /** Combined-sigma distance from the request's prediction; null when the request has no table to check against. */
  sigmaDistance: number | null;
  /** Why the position is held back, or null when it is used at once. */
  heldReason: string | null;
}

const tableSchema = z.object({
  ephemeris: z.object({
    rows: z.array(
      z.object({
        t: z.string(),
        ra: z.number(),
        dec: z.number(),
        raRate: z.number(),
        decRate: z.number(),
        unc: z.object({ major: z.number(), minor: z.number(), pa: z.number() }).nullable(),
      }),
    ),
  }),
});

const fmtTime = (ms: number) => new Date(ms).toISOString();
const f1 = (x: number) => x.toFixed(1);

/** Problems with one reported time, by the time rules above. */
function timeIssues(path: string, iso: string, request: RequestRow, site: Site, now: Date, needsDark: boolean): OutcomeIssue[] {
  const t = Date.parse(iso);
  const min = 60_000;
  const latest = now.getTime() + OUTCOME_SLACK_MIN.clock * min;
  if (t > latest) return [{ path, message: `${iso} is in the future (service clock ${now.toISOString()}; ${OUTCOME_SLACK_MIN.clock} min allowed for clock differences)` }];
  const issues: OutcomeIssue[] = [];
  if (request.leasedAt !== null && t < Date.parse(request.leasedAt) - OUTCOME_SLACK_MIN.beforeLease * min) {
    issues.push({ path, message: `${iso} is before the lease began at ${request.leasedAt} (${OUTCOME_SLACK_MIN.beforeLease} min allowed)` });
  }
  const opens = Date.parse(request.windowStart) - OUTCOME_SLACK_MIN.window * min;
  const closes = Date.parse(request.windowEnd) + OUTCOME_SLACK_MIN.window * min;
  if (t < opens || t > closes) {
    issues.push({ path, message: `${iso} is outside the request's window ${request.windowStart} to ${request.windowEnd} (${OUTCOME_SLACK_MIN.window} min allowed either side)` });
  }
  if (needsDark) {
    const sunAltDeg = skyAt(site, new Date(t)).sun.geometricAltDeg;
    const limit = site.limits.nightSunAltitudeDeg;
    if (sunAltDeg >= limit) {
      issues.push({ path, message: `at ${iso} the Sun was ${f1(sunAltDeg)} deg high at ${site.id}, not below the site's night limit ${limit} deg: it was not dark there` });
    }
  }
  return issues;
}

/**
 * Every reason to refuse an outcome (empty: it may be recorded), and for each
 * position (in the order given) its distance from the prediction and whether it
 * is held back.
 */
export function checkOutcome(input: {
  request: RequestRow;
  site: Site;
  now: Date;
  result: 'done' | 'failed';
  observedAt: string;
  siteId?: string | undefined;
  positions: readonly OutcomePosition[];
}): { issues: OutcomeIssue[]; verdicts: PositionVerdict[] } {
  const { request, site, now } = input;
  const issues: OutcomeIssue[] = [];
  if (input.siteId !== undefined && input.siteId !== request.siteId) {
    issues.push({ path: 'body.site', message: `the request is for site ${request.siteId}, not ${input.siteId}` });
  }
  issues.push(...timeIssues('body.observedAt', input.observedAt, request, site, now, input.result === 'done'));
  input.positions.forEach((p, k) => issues.push(...timeIssues(`body.positions[${k}].t`, p.t, request, site, now, true)));
  const parsed = tableSchema.safeParse(request.body);
  const rows: TableRowLike[] = parsed.success ? parsed.data.ephemeris.rows : [];
  const verdicts = input.positions.map((p): PositionVerdict => {
    const place = placeFromTable(rows, Date.parse(p.t), OUTCOME_SLACK_MIN.window * 60);
    if (place === null) return { sigmaDistance: null, heldReason: null };
    const d = sigmaDistance(place, { raDeg: p.ra, decDeg: p.dec, sigmaArcsec: p.sigma });
    return {
      sigmaDistance: d,
      heldReason:
        d > HOLD_BEYOND_SIGMA
          ? `possible misidentification: ${f1(d)} sigma from the predicted place at ${fmtTime(Date.parse(p.t))} (request ${request.id}, revision ${request.revision}), outside the ${HOLD_BEYOND_SIGMA}-sigma region; not used until an operator confirms it`
          : null,
    };
  });
  return { issues, verdicts };
}
