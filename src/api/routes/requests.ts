import { createHash } from 'node:crypto';
import { createQueueAnswers } from '../queue-answers.js';
import { z } from 'zod';
import { NOTICE_BANDS, NOTICE_FORMAT } from '../../intake/notice.js';
import type { RequestKind } from '../../domain/request-kind.js';
import type { LeaseCheck, RequestState } from '../../store/requests.js';
import type { ApiContext } from '../context.js';
import { ApiError } from '../errors.js';
import { checkOutcome } from '../outcome-checks.js';
import { json, noBody, type ApiApp } from '../http.js';
import { errorSchema, idParams, isoTime, kindSchema, limitParam, pageOf, requestView, requestViewJson, stateSchema, toRequestView } from '../schemas.js';

const MAX_LEASE_S = 6 * 3600;

const leaseBody = z
  .object({
    holder: z.string().min(1).max(120).describe('who takes it, e.g. the queue software instance'),
    seconds: z.number().int().min(10).max(MAX_LEASE_S).describe('lease length, 10 s to 6 h'),
  })
  .strict();

const renewBody = z
  .object({
    leaseToken: z.string().min(1).max(200),
    seconds: z.number().int().min(10).max(MAX_LEASE_S),
  })
  .strict();

const positionRow = z
  .object({
    t: isoTime().describe('mid-exposure, ISO UTC'),
    ra: z.number().min(0).lt(360).describe('deg, astrometric ICRS from the site'),
    dec: z.number().min(-90).max(90).describe('deg'),
    sigma: z.number().gt(0).max(3600).describe('1-sigma per axis, arcsec'),
    mag: z.number().min(-5).max(35).optional(),
    band: z.enum(NOTICE_BANDS).optional().describe('band of mag; V when absent'),
  })
  .strict();

const outcomeBody = z
  .object({
    leaseToken: z.string().min(1).max(200),
    result: z.enum(['done', 'failed']),
    observedAt: isoTime().describe('when it was observed (or attempted); checked against the lease, the window, the clock and, for done, the darkness at the site'),
    site: z.string().min(1).max(32).optional().describe("the site that observed it; when given it must be the request's"),
    notes: z.string().max(4000).optional(),
    positions: z
      .array(positionRow)
      .max(2000)
      .optional()
      .describe("positions measured at the site: merged with the object's tracklet (one is enough) and the object replanned at once; one outside the predicted 5-sigma region is kept but held back until an operator confirms it"),
  })
  .strict();

const positionOutcome = z.object({
  id: z.number().int().nullable().describe('the stored observation, for /v1/objects/{id}/observations/{obsId}/confirm'),
  t: z.string(),
  sigmaDistance: z.number().nullable().describe("distance from the request's predicted place in combined sigma; null without a table to check against"),
  held: z.boolean(),
  heldReason: z.string().nullable(),
});

const withdrawBody = z.object({ reason: z.string().min(1).max(1000) }).strict();

const queueQuery = z
  .object({
    site: z.string().min(1).max(32).describe('site id from the configuration'),
    from: isoTime().optional().describe('default: now'),
    to: isoTime().optional().describe('default: from + 12 h'),
    kind: kindSchema.optional(),
    limit: limitParam,
    cursor: z.string().max(400).optional().describe('from nextCursor of the previous page'),
  })
  .strict();

const listQuery = z
  .object({
    state: stateSchema.optional(),
    site: z.string().min(1).max(32).optional(),
    object: z.string().min(1).max(64).optional(),
    cursor: z.string().max(200).optional(),
    limit: limitParam,
  })
  .strict();

const requestWithHistory = requestView.extend({
  history: z.array(z.object({ at: z.string(), fromState: z.string().nullable(), toState: z.string(), detail: z.string().nullable() })).describe('every change of state'),
  revisions: z
    .array(
      z.object({
        revision: z.number().int(),
        at: z.string(),
        assessmentId: z.number().int(),
        score: z.number(),
        windowStart: z.string(),
        windowEnd: z.string(),
        changes: z.array(z.object({ field: z.string(), from: z.unknown(), to: z.unknown() })).describe('what this revision changed (window edges, score, plan fields such as sequence and ephemeris); empty for the first'),
      }),
    )
    .describe('every revision, first to last'),
  replacement: z.string().nullable().describe('for a request no longer open: the open request to take instead, when there is one'),
});

function leaseFailure(check: Exclude<LeaseCheck, { status: 'ok' }>, id: string): ApiError {
  switch (check.status) {
    case 'not_found':
      return new ApiError(404, 'not_found', `no request ${id}`);
    case 'not_leased':
      return new ApiError(409, 'not_leased', `request ${id} is ${check.state}, not leased`, { state: check.state });
    case 'bad_token':
      return new ApiError(409, 'stale_lease', `the lease token does not match the current lease of ${id}; lease it again`);
    case 'expired':
      return new ApiError(409, 'lease_expired', `the lease of ${id} ran out at ${check.at}; lease it again`, { expiredAt: check.at });
  }
}

function encodeCursor(createdAt: string, id: string): string {
  return Buffer.from(`${createdAt}|${id}`).toString('base64url');
}

function decodeCursor(cursor: string): { createdAt: string; id: string } {
  const text = Buffer.from(cursor, 'base64url').toString('utf8');
  const [createdAt, id] = text.split('|');
  if (!createdAt || !id) throw new ApiError(400, 'bad_request', 'invalid cursor', [{ path: 'query.cursor', message: 'not a cursor this API gave out' }]);
  return { createdAt, id };
}

const QUEUE_ANSWER_TAIL = Buffer.from(']}', 'utf8');

/** A queue page's position: the last item's score, window start and id (the queue's order). */
function encodeQueueCursor(last: { score: number; windowStart: string; id: string }): string {
  return Buffer.from(JSON.stringify([last.score, last.windowStart, last.id])).toString('base64url');
}

function decodeQueueCursor(cursor: string): { score: number; windowStart: string; id: string } {
  const bad = () => new ApiError(400, 'bad_request', 'invalid cursor', [{ path: 'query.cursor', message: 'not a cursor this API gave out' }]);
  let value: unknown;
  try {
    value = JSON.parse(Buffer.from(cursor, 'base64url').toString('utf8'));
  } catch {
    throw bad();
  }
  if (!Array.isArray(value) || value.length !== 3) throw bad();
  const [score, windowStart, id] = value as unknown[];
  if (typeof score !== 'number' || !Number.isFinite(score) || typeof windowStart !== 'string' || typeof id !== 'string') throw bad();
  return { score, windowStart, id };
}

/** Weak comparison of an If-None-Match header with an entity tag (RFC 9110, section 13.1.2). */
export function matchesEntityTag(header: string | string[] | undefined, etag: string): boolean {
  if (header === undefined) return false;
  const text = Array.isArray(header) ? header.join(',') : header;
  const opaque = (tag: string) => tag.trim().replace(/^W\//, '');
  return text.split(',').some((tag) => tag.trim() === '*' || opaque(tag) === opaque(etag));
}

export function requestRoutes(app: ApiApp, ctx: ApiContext): void {
  const { store, clock, config } = ctx;
  const siteIds = new Set(config.sites.map((s) => s.id));
  const queueAnswers = createQueueAnswers();
  const checkSite = (site: string) => {
    if (!siteIds.has(site))
      throw new ApiError(400, 'bad_request', `unknown site "${site}"`, [{ path: 'query.site', message: `expected one of ${[...siteIds].join(', ')}` }]);
  };

  app.route({
    method: 'GET',
    url: '/v1/queue',
    config: { access: { role: ['scheduler', 'reader'], readsOpenOnLoopback: true } },
    schema: {
      tags: ['queue'],
      summary: 'Queued requests for a site, best score first',
      description: 'Requests whose window is open at `from` or opens before `to`, each with its exposure sequence, tracking rates and ephemeris table. A replan revises a request in place (same id, `revision` goes up) while its window stays in the same night. Pages follow `nextCursor`. The answer carries an `ETag` over its items; send it back as `If-None-Match` and a 304 without a body says nothing changed.',
      querystring: queueQuery,
      response: {
        200: json('the queue', z.object({ site: z.string(), from: z.string(), to: z.string(), nextCursor: z.string().nullable().describe('pass as ?cursor= for the next page; null on the last'), items: z.array(requestView) })),
        304: noBody('the items are unchanged since the entity tag given in If-None-Match'),
        400: json('bad query', errorSchema),
      },
    },
    handler: async (request, reply) => {
      const { query } = request;
      checkSite(query.site);
      const from = query.from ?? clock().toISOString();
      const to = query.to ?? new Date(Date.parse(from) + 12 * 3600_000).toISOString();
      const fromMs = Date.parse(from), toMs = Date.parse(to);
      if (fromMs > toMs) throw new ApiError(400, 'bad_request', `from ${from} is after to ${to}`, [{ path: 'query.to', message: 'must not be before from' }]);
      const kind = query.kind as RequestKind | undefined;
      const after = query.cursor === undefined ? undefined : decodeQueueCursor(query.cursor);
      const key = { siteId: query.site, kind, limit: query.limit, cursor: query.cursor };
      const revision = store.requests.revision();
      let answer = queueAnswers.lookup(key, revision, fromMs, toMs);
      if (answer === null) {
        // One row beyond the page says whether there is a next one.
        const rows = store.requests.queueWithBodyText({ siteId: query.site, from, to, limit: query.limit + 1, ...(kind ? { kind } : {}), ...(after ? { after } : {}) });
        const items = rows.slice(0, query.limit);
        const last = items[items.length - 1];
        const nextCursor = rows.length > query.limit && last ? encodeQueueCursor(last.row) : null;
        const itemsJson = Buffer.from(items.map((i) => requestViewJson(i.row, i.bodyJson)).join(','), 'utf8');
        const etag = `W/"${createHash('sha256').update(itemsJson).update(`|${nextCursor ?? ''}`).digest('base64url').slice(0, 27)}"`;
        const nextStart = store.requests.nextQueuedWindowStart(query.site, to, kind);
        answer = {
          revision,
          fromMs,
          toMs,
          itemsValidBeforeMs: rows.reduce((m, i) => Math.min(m, Date.parse(i.row.windowEnd)), Infinity),
          noNewItemBeforeMs: nextStart === null ? Infinity : Date.parse(nextStart),
          itemsJson,
          nextCursor,
          etag,
        };
        queueAnswers.keep(key, answer);
      }
      reply.header('etag', answer.etag);
      reply.header('cache-control', 'no-cache');
      if (matchesEntityTag(request.headers['if-none-match'], answer.etag)) return reply.status(304).send();
      // The kept items are UTF-8 bytes: the answer is a copy, not a fresh encoding of a large string.
      const head = Buffer.from(`${JSON.stringify({ site: query.site, from, to, nextCursor: answer.nextCursor }).slice(0, -1)},"items":[`, 'utf8');
      // Bytes bypass the serializer: the items were checked against the request schema when they were stored (tests), not on every answer.
      return reply.type('application/json; charset=utf-8').send(Buffer.concat([head, answer.itemsJson, QUEUE_ANSWER_TAIL]) as never);
    },
  });
  app.route({
    method: 'POST',
    url: '/v1/requests/:id/lease',
    config: { access: { role: 'scheduler' } },
    schema: {
      tags: ['queue'],
      summary: 'Take a request for execution',
      description: 'Atomic: exactly one caller wins. The lease token in the answer is needed to renew it and to report the outcome. A lease that runs out returns the request to the queue.',
      params: idParams,
      body: leaseBody,
      response: {
        200: json('leased', z.object({ leaseToken: z.string(), leaseExpiresAt: z.string(), request: requestView })),
        404: json('no such request', errorSchema),
        409: json('another holder has it (details: holder, until), or it is no longer leasable (details: state, supersededBy, and replacement: the open request to lease instead, or null)', errorSchema),
      },
    },
    handler: async (request) => {
      const { params, body } = request;
      const r = store.requests.lease(params.id, body.holder, body.seconds, clock());
      switch (r.status) {
        case 'leased':
          // A leased row always has its expiry.
          return { leaseToken: r.leaseToken, leaseExpiresAt: r.request.leaseExpiresAt!, request: toRequestView(r.request) };
        case 'not_found':
          throw new ApiError(404, 'not_found', `no request ${params.id}`);
        case 'conflict':
          ctx.metrics.leaseConflicts.inc({ site: store.requests.get(params.id)?.siteId ?? 'unknown' });
          throw new ApiError(409, 'lease_conflict', `request ${params.id} is leased by ${r.holder} until ${r.until}`, { holder: r.holder, until: r.until });
        case 'not_leasable':
          throw new ApiError(409, 'not_leasable', `request ${params.id} cannot be leased: ${r.reason}`, {
            state: r.state,
            supersededBy: r.supersededBy,
            replacement: r.replacement,
          });
      }
    },
  });
  app.route({
    method: 'POST',
    url: '/v1/requests/:id/lease/renew',
    config: { access: { role: 'scheduler' } },
    schema: {
      tags: ['queue'],
      summary: 'Extend a lease you hold',
      params: idParams,
      body: renewBody,
      response: {
        200: json('renewed', z.object({ leaseExpiresAt: z.string(), request: requestView })),
        404: json('no such request', errorSchema),
        409: json('not leased, stale token or expired lease', errorSchema),
      },
    },
    handler: async (request) => {
      const { params, body } = request;
      const r = store.requests.renew(params.id, body.leaseToken, body.seconds, clock());
      if (r.status !== 'ok') throw leaseFailure(r, params.id);
      return { leaseExpiresAt: r.request.leaseExpiresAt!, request: toRequestView(r.request) };
    },
  });
  app.route({
    method: 'POST',
    url: '/v1/requests/:id/outcome',
    config: { access: { role: 'scheduler' } },
    schema: {
      tags: ['queue'],
      summary: 'Report a leased request done or failed, with the positions measured',
      description: "Needs the current lease token. The outcome is checked first: `observedAt` (and every position's time) may not be in the future (2 min allowed for clocks), before the lease began (5 min allowed) or more than 15 min outside the request's window, and a `done` and every position must fall in darkness at the site by its own night limit. A refused outcome answers 422 naming each field and reason and changes nothing. Positions are stored as a notice for the object (sender `site:<id>`), merged with its tracklet (one position is enough), and the object is replanned at once; a position outside the request's predicted 5-sigma region is kept but held back as a possible misidentification until an operator confirms it.",
      params: idParams,
      body: outcomeBody,
      response: { 200: json('recorded; the object is replanned', z.object({
          request: requestView,
          positions: z.array(positionOutcome).describe('what became of each position, in time order'),
          notice: z.unknown().nullable().describe('the intake result of the positions notice'),
          replanQueued: z.boolean(),
        })), 404: json('no such request', errorSchema), 409: json('not leased, stale token or expired lease', errorSchema), 422: json('refused: details lists each field and reason; the request is unchanged', errorSchema) },
    },
    handler: async ({ params, body }) => {
      const now = clock();
      const leased = store.requests.checkLease(params.id, body.leaseToken, now);
      if (leased.status !== 'ok') throw leaseFailure(leased, params.id);
      const request = leased.request;
      const site = config.sites.find((s) => s.id === request.siteId);
      if (!site) throw new ApiError(422, 'outcome_refused', `request ${params.id} is for site ${request.siteId}, which is no longer configured`);
      const positions = [...(body.positions ?? [])].sort((a, b) => Date.parse(a.t) - Date.parse(b.t));
      const checked = checkOutcome({ request, site, now, result: body.result, observedAt: body.observedAt, siteId: body.site, positions });
      if (checked.issues.length > 0) {
        throw new ApiError(422, 'outcome_refused', `outcome refused: ${checked.issues.map((i) => `${i.path}: ${i.message}`).join('; ')}`, checked.issues);
      }
      const held = checked.verdicts.filter((v) => v.heldReason !== null).length;
      const r = store.requests.recordOutcome(
        params.id,
        body.leaseToken,
        { result: body.result, observedAt: body.observedAt, notes: body.notes ?? null, positions: positions.length, held },
        now,
      );
      if (r.status !== 'ok') throw leaseFailure(r, params.id);
      let notice: unknown = null;
      const location = { lat: site.location.latDeg, lon: site.location.lonDeg > 180 ? site.location.lonDeg - 360 : site.location.lonDeg, height: site.location.heightM };
      if (positions.length > 0) {
        // The notice names the object by its designation; it is merged into the request's object whatever other senders call it.
        const value = {
          format: NOTICE_FORMAT,
          noticeId: `outcome-${r.request.id}-astrometry`,
          objectId: store.objects.getObject(r.request.objectId)?.designation ?? r.request.objectId,
          issuedAt: now.toISOString(),
          sender: `site:${r.request.siteId}`,
          observer: location,
          observations: positions,
        };
        notice = ctx.intake.ingestFollowUp(value, JSON.stringify(value), `outcome:${r.request.id}`, {
          objectId: r.request.objectId,
          heldReasons: checked.verdicts.map((v) => v.heldReason),
        });
      }
      // Replan the object now: its tracklet is longer and what is left to do has changed.
      store.work.enqueueNewData([r.request.objectId], now);
      ctx.workQueued();
      const stored = positions.length > 0 ? store.objects.observations(r.request.objectId) : [];
      const idOf = (t: string) =>
        stored.find((o) => o.t === new Date(t).toISOString() && o.obsLatDeg === location.lat && o.obsLonDeg === location.lon && o.obsHeightM === location.height)?.id ?? null;
      return {
        request: toRequestView(r.request),
        positions: positions.map((p, k) => ({
          id: idOf(p.t),
          t: p.t,
          sigmaDistance: checked.verdicts[k]!.sigmaDistance === null ? null : Number(checked.verdicts[k]!.sigmaDistance.toFixed(2)),
          held: checked.verdicts[k]!.heldReason !== null,
          heldReason: checked.verdicts[k]!.heldReason,
        })),
        notice,
        replanQueued: true,
      };
    },
  });
  app.route({
    method: 'POST',
    url: '/v1/requests/:id/withdraw',
    config: { access: { role: 'operator' } },
    schema: {
      tags: ['review'],
      summary: 'Withdraw a queued or leased request (operator)',
      params: idParams,
      body: withdrawBody,
      response: {
        200: json('withdrawn', requestView),
        404: json('no such request', errorSchema),
        409: json('already in a final state', errorSchema),
      },
    },
    handler: async (request) => {
      const { params, body } = request;
      const caller = request.caller;
      const r = store.requests.withdraw(params.id, `withdrawn by ${caller?.name ?? 'operator'}: ${body.reason}`, clock());
      if ('status' in r && r.status === 'not_found') throw new ApiError(404, 'not_found', `no request ${params.id}`);
      if ('status' in r && r.status === 'final') throw new ApiError(409, 'final_state', `request ${params.id} is already ${r.state}`, { state: r.state });
      return toRequestView(r);
    },
  });
  app.route({
    method: 'GET',
    url: '/v1/requests/:id',
    config: { access: { role: ['reader', 'scheduler', 'operator'], readsOpenOnLoopback: true } },
    schema: {
      tags: ['review'],
      summary: 'One request with its history',
      params: idParams,
      response: { 200: json('the request', requestWithHistory), 404: json('no such request', errorSchema) },
    },
    handler: async (request) => {
      const { params } = request;
      const r = store.requests.get(params.id);
      if (!r) throw new ApiError(404, 'not_found', `no request ${params.id}`);
      const open = r.state === 'queued' || r.state === 'leased';
      return { ...toRequestView(r), history: store.requests.history(r.id), revisions: store.requests.revisions(r.id), replacement: open ? null : store.requests.replacementOf(r.id) };
    },
  });
  app.route({
    method: 'GET',
    url: '/v1/requests',
    config: { access: { role: ['reader', 'scheduler', 'operator'], readsOpenOnLoopback: true } },
    schema: {
      tags: ['review'],
      summary: 'Requests, newest first, filtered by state, site and object',
      querystring: listQuery,
      response: { 200: json('a page', pageOf(requestView)), 400: json('bad query', errorSchema) },
    },
    handler: async (request) => {
      const { query } = request;
      const rows = store.requests.list({
        limit: query.limit,
        ...(query.state ? { state: query.state as RequestState } : {}),
        ...(query.site ? { siteId: query.site } : {}),
        ...(query.object ? { objectId: query.object } : {}),
        ...(query.cursor ? { before: decodeCursor(query.cursor) } : {}),
      });
      const last = rows[rows.length - 1];
      return { items: rows.map(toRequestView), nextCursor: rows.length === query.limit && last ? encodeCursor(last.createdAt, last.id) : null };
    },
  });
}
