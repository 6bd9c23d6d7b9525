import type { Site } from '../config/schema.js';
import { localNightOf, nightAt, type Night } from '../sky/night.js';
import { parallacticAngleDeg } from '../sky/site.js';
import type { RequestRow } from '../store/requests.js';
import { assessmentFacts, type AssessmentFacts } from '../views/assessment-summary.js';
import { DEFAULT_MOTION_S, pointingConditions, type PointingInput } from '../views/pointing-chart.js';
import { planFacts, rowAt, type PlanRow } from '../views/request-plan.js';
import { sampleTimes, tonightSpan, type TonightObject } from '../views/tonight-chart.js';
import { KIND_WORDS } from '../views/words.js';
import type { ApiContext } from './context.js';
import { ApiError } from './errors.js';
import { EstimateRefusedError } from './on-demand.js';

/**
 * The data behind the review pages and pictures, read from the store (requests, assessments)
 * and the on-demand estimates: what the pure views in src/views/ draw.
 */

const MS_PER_HOUR = 3_600_000;
/** Most virtual orbits drawn in the pointing picture (the whole ensemble of a default estimate). */
export const MAX_MEMBER_POINTS = 1000;

/** ISO UTC rounded up to the whole second (so it never falls before a window's first table row), for short links. */
export function isoSeconds(t: Date): string {
  return `${new Date(Math.ceil(t.getTime() / 1000) * 1000).toISOString().slice(0, 19)}Z`;
}

/**
 * The local date of the night a picture shows by default at the site: the night `now` belongs to
 * by the sky module's rule (local mean noon to noon, `localNightOf`) until that night's sunrise,
 * then the coming one, so a page opened after dawn shows the night ahead, not the one just over.
 */
export function currentLocalDate(site: Site, now: Date): string {
  const date = localNightOf(now, site.location.lonDeg);
  const night = nightAt(site, date);
  if (now < (night.sunrise ?? night.span.end)) return date;
  return new Date(Date.parse(`${date}T00:00:00Z`) + 24 * MS_PER_HOUR).toISOString().slice(0, 10);
}

/** When a pointing picture is drawn, why, and the request (if any) whose duration its motion covers. */
export interface PointingTime {
  t: Date;
  reason: string;
  request: RequestRow | null;
}

const hm = (iso: string | Date) => (typeof iso === 'string' ? iso : iso.toISOString()).slice(11, 16);

export function reviewData(ctx: ApiContext) {
  const { config, store, clock } = ctx;

  const siteOr404 = (id: string): Site => {
    const site = config.sites.find((s) => s.id === id);
    if (!site) throw new ApiError(404, 'not_found', `no site ${id}; configured sites: ${config.sites.map((s) => s.id).join(', ')}`, [{ path: 'site', message: `expected one of ${config.sites.map((s) => s.id).join(', ')}` }]);
    return site;
  };

  /** Queued and leased requests, best score first. */
  const openRequests = (filter: { siteId?: string; objectId?: string }): RequestRow[] =>
    (['queued', 'leased'] as const)
      .flatMap((state) => store.requests.list({ state, limit: 500, ...filter }))
      .sort((a, b) => b.score - a.score || a.windowStart.localeCompare(b.windowStart) || a.id.localeCompare(b.id));

  /** An on-demand answer, or null when there is none or the estimator refuses (the views then use the request tables). */
  const orNull = async <T>(answer: Promise<T | null>): Promise<T | null> => {
    try {
      return await answer;
    } catch (err) {
      if (err instanceof EstimateRefusedError) return null;
      throw err;
    }
  };

  const nightOf = (site: Site, localDate: string): Night => {
    try {
      return nightAt(site, localDate);
    } catch (err) {
      throw new ApiError(400, 'bad_request', `invalid query: date: ${(err as Error).message}`, [{ path: 'query.date', message: (err as Error).message }]);
    }
  };

  /** The ephemeris rows of several requests merged by time (the first request's row wins a tie). */
  const tableOf = (requests: readonly RequestRow[]): PlanRow[] => {
    const byT = new Map<string, PlanRow>();
    for (const r of requests) for (const row of planFacts(r.body).rows) if (!byT.has(row.t)) byT.set(row.t, row);
    return [...byT.values()].sort((a, b) => Date.parse(a.t) - Date.parse(b.t));
  };

  const factsOf = (objectId: string): AssessmentFacts => assessmentFacts(store.requests.latestAssessment(objectId)?.summary ?? null);

  /** Tonight's timeline data at a site: its night and one entry per object with open requests overlapping it. */
  async function tonight(site: Site, localDate: string): Promise<{ night: Night; objects: TonightObject[] }> {
    const night = nightOf(site, localDate);
    const { startUtc, endUtc } = tonightSpan(night);
    const open = openRequests({ siteId: site.id }).filter((r) => Date.parse(r.windowEnd) > startUtc.getTime() && Date.parse(r.windowStart) < endUtc.getTime());
    const byObject = new Map<string, RequestRow[]>();
    for (const r of open) byObject.set(r.objectId, [...(byObject.get(r.objectId) ?? []), r]);
    const times = sampleTimes(startUtc, endUtc);
    const objects: TonightObject[] = [];
    for (const [objectId, requests] of byObject) {
      const answer = await orNull(ctx.onDemand.ephemeris(objectId, site.location, times));
      const altitude = answer
        ? answer.rows.map((row) => ({ t: new Date(row.t), altDeg: row.alt }))
        : tableOf(requests).map((row) => ({ t: new Date(row.t), altDeg: row.alt }));
      const windows = (factsOf(objectId).sites.find((s) => s.siteId === site.id)?.windows ?? [])
        .map((w) => ({ startUtc: new Date(w.start), endUtc: new Date(w.end), opensBecause: w.opensBecause, closesBecause: w.closesBecause }))
        .filter((w) => Number.isFinite(w.startUtc.getTime()) && Number.isFinite(w.endUtc.getTime()));
      objects.push({
        objectId,
        windows,
        altitude,
        altitudeSource: answer ? 'estimate' : 'request-table',
        requests: requests.map((r) => {
          const facts = planFacts(r.body);
          return {
            requestId: r.id,
            kind: r.kind,
            state: r.state,
            score: r.score,
            windowStartUtc: new Date(r.windowStart),
            windowEndUtc: new Date(r.windowEnd),
            recommendedStartUtc: new Date(r.recommendedStart),
            durationS: facts.durationS ?? 0,
            closesBecause: facts.closesBecause,
          };
        }),
      });
    }
    return { night, objects };
  }

  /**
   * The default time of an object's pointing picture at a site: the start of its next window there
   * (the stored assessment's windows and the open requests' windows), or now inside an open one,
   * or now when none lies ahead.
   */
  function defaultPointingTime(objectId: string, site: Site, now: Date): PointingTime {
    const requests = openRequests({ objectId, siteId: site.id });
    const windows = [
      ...(factsOf(objectId).sites.find((s) => s.siteId === site.id)?.windows ?? []).map((w) => ({ start: w.start, end: w.end })),
      ...requests.map((r) => ({ start: r.windowStart, end: r.windowEnd })),
    ]
      .filter((w) => Date.parse(w.end) > now.getTime())
      .sort((a, b) => Date.parse(a.start) - Date.parse(b.start));
    const next = windows[0];
    if (!next) return { t: now, reason: 'now: no window lies ahead at this site', request: requests[0] ?? null };
    const t = Date.parse(next.start) > now.getTime() ? new Date(Date.parse(next.start)) : now;
    const request = requests.find((r) => Date.parse(r.windowStart) <= t.getTime() && Date.parse(r.windowEnd) >= t.getTime()) ?? null;
    const reason =
      t === now
        ? `now, inside the window open ${hm(next.start)}–${hm(next.end)} UTC`
        : `the start of the next window, ${hm(next.start)}–${hm(next.end)} UTC`;
    return { t, reason, request };
  }

  /** A time asked for: said to be a request's recommended start when it is one (to the second, as the pages link it). */
  function askedTime(t: Date, atSite: readonly RequestRow[], now: Date): PointingTime {
    const starting = atSite.find((r) => Math.ceil(Date.parse(r.recommendedStart) / 1000) * 1000 === t.getTime());
    if (starting) return { t, reason: `the recommended start of its ${KIND_WORDS[starting.kind] ?? starting.kind} request (score ${starting.score})`, request: starting };
    const covering = atSite.find((r) => Date.parse(r.windowStart) <= t.getTime() && Date.parse(r.windowEnd) >= t.getTime()) ?? null;
    const isNow = Math.abs(t.getTime() - now.getTime()) <= 60_000;
    const reason = isNow && covering ? `now, in the window of its ${KIND_WORDS[covering.kind] ?? covering.kind} request (recommended start ${hm(covering.recommendedStart)} UTC)` : isNow ? 'now' : 'the time asked for';
    return { t, reason, request: covering ?? atSite[0] ?? null };
  }

  /** The pointing picture's input for an object from a site (default: its best open request's site) at `t` (default: see defaultPointingTime). */
  async function pointing(objectId: string, siteId: string | undefined, tAsked: Date | undefined): Promise<PointingInput> {
    if (!store.objects.getObject(objectId)) throw new ApiError(404, 'not_found', `no object ${objectId}`);
    const objectOpen = openRequests({ objectId });
    const site = siteOr404(siteId ?? objectOpen[0]?.siteId ?? config.sites[0]!.id);
    const atSite = objectOpen.filter((r) => r.siteId === site.id);
    const now = clock();
    const when: PointingTime = tAsked ? askedTime(tAsked, atSite, now) : defaultPointingTime(objectId, site, now);
    const t = when.t;
    const view = await orNull(ctx.onDemand.skyView(objectId, site.location, t, MAX_MEMBER_POINTS));
    let row: PlanRow | null = view?.row ?? null;
    const source: PointingInput['positionSource'] = row ? 'estimate' : 'request-table';
    if (!row) {
      const candidates = atSite.length > 0 ? atSite : store.requests.list({ objectId, siteId: site.id, limit: 50 });
      const table = tableOf(candidates);
      row = rowAt(table, t);
      if (!row) {
        const covered = table.length > 0 ? `${table[0]!.t} to ${table[table.length - 1]!.t}` : 'no times';
        throw new ApiError(
          422,
          'no_position',
          `no position for ${objectId} at ${t.toISOString()} from ${site.id}: no orbit estimate is available and its request tables at this site cover ${covered}`,
          [{ path: 'query.t', message: `expected a time covered by a request table (${covered})` }],
        );
      }
    }
    let slit: PointingInput['slit'] = null;
    if (site.spectrograph) {
      const planned = atSite.filter((r) => r.kind === 'spectrum').map((r) => planFacts(r.body).slitArcsec).find((w) => w !== null) ?? null;
      const paDeg = parallacticAngleDeg(site.location, t, row.ra, row.dec);
      slit = {
        widthArcsec: planned ?? Math.min(...site.spectrograph.slitWidthsArcsec),
        lengthArcsec: site.spectrograph.slitLengthArcsec,
        paDeg: ((paDeg % 180) + 180) % 180,
        paReason: `the parallactic angle then; width ${planned !== null ? 'of the spectrum request' : 'the narrowest configured'}`,
      };
    }
    const request = when.request;
    const facts = request ? planFacts(request.body) : null;
    const motionS = facts?.durationS ?? DEFAULT_MOTION_S;
    const motionReason =
      request && facts?.durationS != null
        ? `the ${KIND_WORDS[request.kind] ?? request.kind} request’s expected ${Math.max(1, Math.round(facts.durationS / 60))} min`
        : `${DEFAULT_MOTION_S / 60} min (no request covers this time)`;
    const pattern = facts?.searchPattern ?? null;
    return {
      objectId,
      siteId: site.id,
      siteName: site.name,
      timeUtc: t,
      timeReason: when.reason,
      positionSource: source,
      raDeg: row.ra,
      decDeg: row.dec,
      raRate: row.raRate,
      decRate: row.decRate,
      vMag: row.mag,
      unc: row.unc,
      members: view?.row ? view.members : null,
      imagerFieldArcmin: site.imager.fieldArcmin,
      slit,
      searchPattern: pattern,
      motionS,
      motionReason,
      conditions: pointingConditions(site, t, { raDeg: row.ra, decDeg: row.dec, raRate: row.raRate, decRate: row.decRate }),
    };
  }

  return { siteOr404, openRequests, factsOf, tonight, pointing, defaultPointingTime };
}

export type ReviewData = ReturnType<typeof reviewData>;
