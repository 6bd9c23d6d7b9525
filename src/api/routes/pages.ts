import { z } from 'zod';
import type { Site } from '../../config/schema.js';
import type { RequestRow } from '../../store/requests.js';
import { renderObjectPage, type ObjectRequestView, type ObjectSiteView } from '../../views/object-page.js';
import { renderReviewPage, type ObjectWithoutRequest, type ReviewRequest, type ReviewSite } from '../../views/review-page.js';
import { planFacts, rowAt } from '../../views/request-plan.js';
import type { Caller } from '../auth.js';
import type { ApiContext } from '../context.js';
import { CAUTIONS } from '../docs-page.js';
import { ApiError } from '../errors.js';
import { EstimateBusyError } from '../on-demand.js';
import { currentLocalDate, isoSeconds, reviewData } from '../review-data.js';
import { document, json, type ApiApp } from '../http.js';
import { errorSchema, idParams } from '../schemas.js';
import { pageTokenParam, READ_ROLES } from './pictures.js';

/**
 * The review pages in HTML: tonight's queue per site (`/`) and a page per object
 * (`/objects/{id}`). The JSON stays under /v1/. A page reached with `?token=` passes the
 * token on to its pictures and its links to the other pages.
 */

const HTML_TYPE = 'text/html; charset=utf-8';
const pageQuery = z.object({ token: pageTokenParam }).strict();

/** `url` with the page's token added when it was reached with one. */
export function withToken(url: string, caller: Caller | null): string {
  const token = caller?.pageToken;
  if (!token) return url;
  return `${url}${url.includes('?') ? '&' : '?'}token=${encodeURIComponent(token)}`;
}

const objectPath = (id: string) => `/objects/${encodeURIComponent(id)}`;

export function pageRoutes(app: ApiApp, ctx: ApiContext): void {
  const { config, store, clock } = ctx;
  const data = reviewData(ctx);

  function pointingUrl(objectId: string, siteId: string, t: Date | null, caller: Caller | null): string {
    const base = `/v1/objects/${encodeURIComponent(objectId)}/pointing.svg?site=${encodeURIComponent(siteId)}`;
    return withToken(t ? `${base}&t=${encodeURIComponent(isoSeconds(t))}` : base, caller);
  }

  function queueRow(r: RequestRow, now: Date, caller: Caller | null): ReviewRequest {
    const facts = planFacts(r.body);
    const start = new Date(r.recommendedStart);
    const row = facts.raDeg === null ? rowAt(facts.rows, start) : null;
    return {
      id: r.id,
      objectId: r.objectId,
      kind: r.kind,
      state: r.state,
      score: r.score,
      windowStartUtc: r.windowStart,
      windowEndUtc: r.windowEnd,
      recommendedStartUtc: r.recommendedStart,
      durationS: facts.durationS,
      raDeg: facts.raDeg ?? row?.ra ?? null,
      decDeg: facts.decDeg ?? row?.dec ?? null,
      altDegAtStart: facts.atStart?.altitudeDeg ?? row?.alt ?? null,
      airmassAtStart: facts.atStart?.airmass ?? row?.airmass ?? null,
      uncMajorArcsec: facts.uncertainty?.major ?? row?.unc?.major ?? null,
      vMag: facts.vMag,
      objectPageUrl: withToken(objectPath(r.objectId), caller),
      pointingUrl: pointingUrl(r.objectId, r.siteId, new Date(Math.max(now.getTime(), start.getTime())), caller),
      requestJsonUrl: withToken(`/v1/requests/${encodeURIComponent(r.id)}`, caller),
    };
  }

  /** Active objects without an open request at the site, with the latest assessment's reasons there. */
  function withoutRequests(site: Site, activeIds: readonly string[], open: readonly RequestRow[], caller: Caller | null): ObjectWithoutRequest[] {
    const planned = new Set(open.map((r) => r.objectId));
    return activeIds
      .filter((id) => !planned.has(id))
      .map((id) => {
        const latest = store.requests.latestAssessment(id);
        let reasons: string[];
        if (!latest) {
          const work = store.work.get(id);
          reasons = [work ? `not assessed yet (work ${work.state}${work.lastError ? `; last error: ${work.lastError}` : ''})` : 'not assessed yet'];
        } else {
          const atSite = data.factsOf(id).sites.find((s) => s.siteId === site.id);
          if (!atSite) reasons = ['the latest assessment did not plan for this site'];
          else if (atSite.reasons.length > 0) reasons = atSite.reasons;
          else if (atSite.windows.length > 0) reasons = ['its requests here have been taken, have passed or were withdrawn'];
          else reasons = ['no observable window here in the planning horizon'];
        }
        return { objectId: id, objectPageUrl: withToken(objectPath(id), caller), reasons };
      });
  }

  function reviewPage(caller: Caller | null): string {
    const now = clock();
    const activeIds = store.objects.listObjects({ state: 'active', limit: 500 }).map((o) => o.id);
    const sites: ReviewSite[] = config.sites.map((site) => {
      const open = data.openRequests({ siteId: site.id }).filter((r) => Date.parse(r.windowEnd) > now.getTime());
      const localDate = currentLocalDate(site, now);
      return {
        id: site.id,
        name: site.name,
        latDeg: site.location.latDeg,
        lonDeg: site.location.lonDeg,
        localDate,
        tonightUrl: withToken(`/v1/sites/${encodeURIComponent(site.id)}/tonight.svg?date=${localDate}`, caller),
        queueJsonUrl: withToken(`/v1/queue?site=${encodeURIComponent(site.id)}`, caller),
        requests: open.map((r) => queueRow(r, now, caller)),
        withoutRequests: withoutRequests(site, activeIds, open, caller),
      };
    });
    const sinceMs = now.getTime() - config.planning.horizonH * 3_600_000;
    const setAside = (['retired', 'retracted'] as const)
      .flatMap((state) => store.objects.listObjects({ state, limit: 500 }))
      .filter((o) => Date.parse(o.lastNoticeAt) >= sinceMs)
      .map((o) => ({
        objectId: o.id,
        objectPageUrl: withToken(objectPath(o.id), caller),
        state: o.state,
        reason: (o.state === 'retracted' ? o.retractionReason : o.retiredReason) ?? 'no reason recorded',
      }));
    return renderReviewPage({
      title: 'nightjar',
      nowUtc: now,
      sites,
      setAside,
      cautions: CAUTIONS,
      links: [
        { href: '/v1/docs', text: 'API documentation' },
        { href: '/v1/openapi.json', text: 'OpenAPI document' },
        { href: withToken('/v1/objects', caller), text: 'objects (JSON)' },
        { href: withToken('/v1/requests', caller), text: 'requests (JSON)' },
      ],
    });
  }

  async function objectPage(objectId: string, caller: Caller | null): Promise<string> {
    const o = store.objects.getObject(objectId);
    if (!o) throw new ApiError(404, 'not_found', `no object ${objectId}`);
    const latest = store.requests.latestAssessment(objectId);
    const facts = data.factsOf(objectId);
    const all = store.requests.list({ objectId, limit: 500 });
    const rank = (r: RequestRow) => (r.state === 'queued' || r.state === 'leased' ? 0 : 1);
    const sites: ObjectSiteView[] = [];
    for (const site of config.sites) {
      const requests = all
        .filter((r) => r.siteId === site.id)
        .sort((a, b) => rank(a) - rank(b) || (rank(a) === 0 ? b.score - a.score : b.createdAt.localeCompare(a.createdAt)) || a.id.localeCompare(b.id));
      const views: ObjectRequestView[] = requests.map((r) => ({
        id: r.id,
        kind: r.kind,
        state: r.state,
        score: r.score,
        revision: r.revision,
        revisions: store.requests.revisions(r.id).map((v) => ({ revision: v.revision, at: v.at, changed: v.changes.map((c) => c.field) })),
        windowStartUtc: r.windowStart,
        windowEndUtc: r.windowEnd,
        recommendedStartUtc: r.recommendedStart,
        durationS: planFacts(r.body).durationS,
        createdAt: r.createdAt,
        updatedAt: r.updatedAt,
        stateReason: r.stateReason,
        supersededBy: r.supersededBy,
        history: store.requests.history(r.id).map((h) => ({ at: h.at, from: h.fromState, to: h.toState, detail: h.detail })),
        jsonUrl: withToken(`/v1/requests/${encodeURIComponent(r.id)}`, caller),
      }));
      const atSite = facts.sites.find((s) => s.siteId === site.id);
      const open = requests.filter((r) => rank(r) === 0);
      let pointing: ObjectSiteView['pointing'];
      if (o.state === 'retracted') pointing = { missing: 'the object was retracted' };
      else {
        try {
          const input = await data.pointing(objectId, site.id, undefined);
          pointing = {
            url: pointingUrl(objectId, site.id, null, caller),
            alt: `${objectId} from ${site.name} at ${input.timeUtc.toISOString()}: ${input.conditions.observable ? `altitude ${Math.round(input.conditions.altDeg)} degrees` : 'not observable then'}; uncertainty region, imager field, slit and motion`,
          };
        } catch (err) {
          // The estimate worker is busy: the page still answers, and the picture is asked for on its own.
          if (err instanceof EstimateBusyError) pointing = { url: pointingUrl(objectId, site.id, null, caller), alt: `${objectId} from ${site.name}: where to point` };
          else if (!(err instanceof ApiError) || err.statusCode !== 422) throw err;
          else pointing = { missing: 'no orbit estimate and no request table covers the time' };
        }
      }
      sites.push({
        id: site.id,
        name: site.name,
        requests: views,
        windows: (atSite?.windows ?? []).map((w) => ({ startUtc: w.start, endUtc: w.end, closesBecause: w.closesBecause })),
        reasons: atSite ? atSite.reasons : !latest ? ['not assessed yet'] : requests.length > 0 ? [] : ['the latest assessment holds no plan for this site'],
        pointing: open.length > 0 || (atSite?.windows.length ?? 0) > 0 ? pointing : { missing: 'no window or open request here' },
      });
    }
    return renderObjectPage({
      title: 'nightjar',
      objectId,
      state: o.state,
      stateReason: o.state === 'retracted' ? o.retractionReason : o.state === 'retired' ? o.retiredReason : null,
      firstNoticeAt: o.firstNoticeAt,
      lastNoticeAt: o.lastNoticeAt,
      tracklet: store.objects.observations(objectId).map((x) => ({ t: x.t, raDeg: x.raDeg, decDeg: x.decDeg, sigmaArcsec: x.sigmaArcsec, mag: x.mag, band: x.band })),
      assessedAt: latest?.createdAt ?? null,
      estimate: facts.estimate,
      sites,
      cautions: CAUTIONS,
      links: [
        { href: withToken('/', caller), text: 'tonight’s requests' },
        { href: withToken(`/v1/objects/${encodeURIComponent(objectId)}`, caller), text: 'this object as JSON' },
      ],
    });
  }

  app.route({
    method: 'GET',
    url: '/',
    config: { access: { role: READ_ROLES, readsOpenOnLoopback: true, acceptsPageToken: true } },
    schema: {
      tags: ['review'],
      summary: 'The review page: per site tonight’s timeline and queue, and the objects without requests with the reasons (HTML, no scripts)',
      querystring: pageQuery,
      response: { 200: document('HTML', 'text/html') },
    },
    handler: async (request, reply) => {
      const caller = request.caller;
      return reply.type(HTML_TYPE).header('cache-control', 'no-store').header('referrer-policy', 'no-referrer').send(reviewPage(caller));
    },
  });
  app.route({
    method: 'GET',
    url: '/objects/:id',
    config: { access: { role: READ_ROLES, readsOpenOnLoopback: true, acceptsPageToken: true } },
    schema: {
      tags: ['review'],
      summary: 'A page per object: estimate, where to point, every site’s requests with their history, and the reasons for sites without (HTML, no scripts)',
      params: idParams,
      querystring: pageQuery,
      response: { 200: document('HTML', 'text/html'), 404: json('unknown object', errorSchema) },
    },
    handler: async (request, reply) => {
      const { params } = request;
      const caller = request.caller;
      return reply.type(HTML_TYPE).header('cache-control', 'no-store').header('referrer-policy', 'no-referrer').send(await objectPage(params.id, caller));
    },
  });
}
