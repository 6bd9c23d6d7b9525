import { z } from 'zod';
import { summarise } from '../../intake/ingest.js';
import { looksLikeNdjson } from '../../intake/payload.js';
import type { ApiContext } from '../context.js';
import { ApiError } from '../errors.js';
import { json, type ApiApp } from '../http.js';
import { errorSchema, limitParam, pageOf } from '../schemas.js';

const reasonItem = z.object({ path: z.string(), message: z.string() });

const intakeResult = z
  .discriminatedUnion('status', [
    z.object({
      status: z.literal('accepted'),
      sender: z.string(),
      noticeId: z.string(),
      objectId: z.string().describe('the object the notice merged into'),
      observationsAdded: z.number().int(),
      objectState: z.string().describe("the object's state after the notice: active, retracted or retired"),
      queued: z.boolean().describe('whether the object was put on the work queue for a new assessment'),
    }),
    z.object({
      status: z.literal('duplicate'),
      sender: z.string(),
      noticeId: z.string(),
      objectId: z.string(),
      sameContent: z.boolean().describe('false when the same sender and noticeId came with other content (the first one is kept)'),
    }),
    z.object({
      status: z.literal('rejected'),
      sender: z.string().nullable(),
      noticeId: z.string().nullable(),
      rejectionId: z.number().int().describe('see /v1/rejections/{id}'),
      reasons: z.array(reasonItem).describe('every problem, by field'),
    }),
  ])
  .meta({ id: 'IntakeResult', description: 'What became of one notice of a payload.' });

const intakeAnswer = z.object({ accepted: z.number().int(), duplicate: z.number().int(), rejected: z.number().int(), results: z.array(intakeResult) });

const noticeItem = z.object({
  id: z.number().int(),
  sender: z.string(),
  noticeId: z.string(),
  objectId: z.string(),
  source: z.string(),
  receivedAt: z.string(),
  issuedAt: z.string(),
  kind: z.enum(['observations', 'retraction']),
  state: z.enum(['received', 'merged']),
  observationsAdded: z.number().int(),
  notice: z.unknown().describe('the notice as received'),
});

const rejectionSummary = z.object({
  id: z.number().int(),
  source: z.string(),
  receivedAt: z.string(),
  sender: z.string().nullable(),
  noticeId: z.string().nullable(),
  sizeBytes: z.number().int().describe('size of the payload as received, bytes'),
  reasonCount: z.number().int(),
  reasons: z.array(reasonItem).describe('the first 10 reasons; every one, with the payload, at /v1/rejections/{id}'),
});

const rejectionItem = rejectionSummary.omit({ reasons: true }).extend({
  raw: z.string().describe('the payload exactly as received'),
  reasons: z.array(reasonItem).describe('every reason'),
});

/** Reasons shown per rejection in the list. */
const MAX_LISTED_REASONS = 10;

const numericCursor = z.coerce.number().int().positive().optional().describe('from nextCursor of the previous page');

export function noticeRoutes(app: ApiApp, ctx: ApiContext): void {
  const { store, intake } = ctx;
  app.route({
    method: 'POST',
    url: '/v1/notices',
    config: { access: { role: 'feeder', rawBody: true } },
    schema: {
      tags: ['notices'],
      summary: 'Submit discovery notices (one, an array, or NDJSON as application/ndjson)',
      description: 'Each notice is validated (format nightjar.notice.v1) and stored, or kept as a rejection with every reason. The same sender and noticeId is stored once. 202 when at least one notice was accepted or was a duplicate, 422 when every notice was rejected.',
      response: {
        202: json('a result per notice', intakeAnswer),
        401: json('no or unknown token', errorSchema),
        403: json('token without the feeder role', errorSchema),
        413: json('body over the size limit', errorSchema),
        415: json('a media type other than application/json, application/ndjson, application/x-ndjson or text/plain', errorSchema),
        422: json('every notice rejected; the reasons are in results', intakeAnswer),
      },
    },
    handler: async (request, reply) => {
      const caller = request.caller;
      const body = Buffer.isBuffer(request.body) ? request.body : Buffer.from(typeof request.body === 'string' ? request.body : '');
      const source = `http:${caller?.name ?? 'unknown'}`;
      const contentType = String(request.headers['content-type'] ?? '');
      // NDJSON by its media type; text/plain by its shape.
      const ndjson = contentType.includes('ndjson') || (contentType.startsWith('text/plain') && looksLikeNdjson(null, body.toString('utf8')));
      const results = ndjson ? intake.ingestNdjson(body, source) : intake.ingestJson(body, source);
      const counts = summarise(results);
      if (counts.accepted > 0) ctx.workQueued();
      return reply.status(counts.rejected === results.length ? 422 : 202).send({ ...counts, results });
    },
  });
  app.route({
    method: 'GET',
    url: '/v1/notices',
    config: { access: { role: ['reader', 'operator'], readsOpenOnLoopback: true } },
    schema: {
      tags: ['notices'],
      summary: 'Stored notices, newest first',
      querystring: z.object({ cursor: numericCursor, limit: limitParam, object: z.string().min(1).max(64).optional() }).strict(),
      response: { 200: json('a page', pageOf(noticeItem)), 400: json('bad query', errorSchema) },
    },
    handler: async (request) => {
      const { query } = request;
      const rows = store.notices.listNotices({
        limit: query.limit,
        ...(query.cursor !== undefined ? { beforeId: query.cursor } : {}),
        ...(query.object !== undefined ? { objectId: query.object } : {}),
      });
      const items = rows.map(({ raw, ...rest }) => ({ ...rest, notice: JSON.parse(raw) as unknown }));
      const last = rows[rows.length - 1];
      return { items, nextCursor: rows.length === query.limit && last ? String(last.id) : null };
    },
  });
  app.route({
    method: 'GET',
    url: '/v1/rejections',
    config: { access: { role: ['reader', 'operator'], readsOpenOnLoopback: true } },
    schema: {
      tags: ['notices'],
      summary: 'Rejected payloads, newest first: size, reasons, when received',
      description: 'A summary per rejection; the payload as received and every reason are at /v1/rejections/{id}.',
      querystring: z.object({ cursor: numericCursor, limit: limitParam }).strict(),
      response: { 200: json('a page', pageOf(rejectionSummary)), 400: json('bad query', errorSchema) },
    },
    handler: async (request) => {
      const { query } = request;
      const rows = store.notices.listRejectionSummaries({ limit: query.limit, maxReasons: MAX_LISTED_REASONS, ...(query.cursor !== undefined ? { beforeId: query.cursor } : {}) });
      const last = rows[rows.length - 1];
      return { items: rows, nextCursor: rows.length === query.limit && last ? String(last.id) : null };
    },
  });
  app.route({
    method: 'GET',
    url: '/v1/rejections/:id',
    config: { access: { role: ['reader', 'operator'], readsOpenOnLoopback: true } },
    schema: {
      tags: ['notices'],
      summary: 'One rejected payload exactly as received, with every reason',
      params: z.object({ id: z.coerce.number().int().positive().describe('rejection id') }).strict(),
      response: { 200: json('the rejection', rejectionItem), 404: json('no such rejection', errorSchema) },
    },
    handler: async (request) => {
      const { params } = request;
      const row = store.notices.getRejection(params.id);
      if (!row) throw new ApiError(404, 'not_found', `no rejection ${params.id}`);
      return { ...row, sizeBytes: Buffer.byteLength(row.raw, 'utf8'), reasonCount: row.reasons.length };
    },
  });
}
