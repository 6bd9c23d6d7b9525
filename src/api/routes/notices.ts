import { z } from 'zod';
import { summarise } from '../../intake/ingest.js';
import { looksLikeNdjson } from '../../intake/payload.js';
import type { ApiContext } from '../context.js';
import { ApiError } from '../errors.js';
import { defineRoute, type AnyRouteSpec } from '../route-spec.js';
import { errorSchema, limitParam, pageOf } from '../schemas.js';

const intakeResult = z.object({
  status: z.enum(['accepted', 'duplicate', 'rejected']),
  sender: z.string().nullable(),
  noticeId: z.string().nullable(),
  objectId: z.string().optional(),
  observationsAdded: z.number().int().optional(),
  reasons: z.array(z.object({ path: z.string(), message: z.string() })).optional().describe('for a rejected notice: every problem, by field'),
});

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

const reasonItem = z.object({ path: z.string(), message: z.string() });

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

export function noticeRoutes(ctx: ApiContext): AnyRouteSpec[] {
  const { store, intake } = ctx;
  return [
    defineRoute({
      method: 'POST',
      url: '/v1/notices',
      tag: 'notices',
      summary: 'Submit discovery notices (one, an array, or NDJSON as application/ndjson)',
      description:
        'Each notice is validated (format nightjar.notice.v1) and stored, or kept as a rejection with every reason. The same sender and noticeId is stored once. 202 when at least one notice was accepted or was a duplicate, 422 when every notice was rejected.',
      role: 'feeder',
      rawBody: true,
      responses: {
        202: { description: 'a result per notice', schema: intakeAnswer },
        401: { description: 'no or unknown token', schema: errorSchema },
        403: { description: 'token without the feeder role', schema: errorSchema },
        413: { description: 'body over the size limit', schema: errorSchema },
        415: { description: 'a media type other than application/json, application/ndjson, application/x-ndjson or text/plain', schema: errorSchema },
        422: { description: 'every notice rejected; the reasons are in results', schema: intakeAnswer },
      },
      handler: async ({ request, reply, caller }) => {
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
    }),
    defineRoute({
      method: 'GET',
      url: '/v1/notices',
      tag: 'notices',
      summary: 'Stored notices, newest first',
      role: ['reader', 'operator'],
      readsOpenOnLoopback: true,
      query: z.object({ cursor: numericCursor, limit: limitParam, object: z.string().min(1).max(64).optional() }).strict(),
      responses: { 200: { description: 'a page', schema: pageOf(noticeItem) }, 400: { description: 'bad query', schema: errorSchema } },
      handler: async ({ query }) => {
        const rows = store.notices.listNotices({
          limit: query.limit,
          ...(query.cursor !== undefined ? { beforeId: query.cursor } : {}),
          ...(query.object !== undefined ? { objectId: query.object } : {}),
        });
        const items = rows.map(({ raw, ...rest }) => ({ ...rest, notice: JSON.parse(raw) as unknown }));
        const last = rows[rows.length - 1];
        return { items, nextCursor: rows.length === query.limit && last ? String(last.id) : null };
      },
    }),
    defineRoute({
      method: 'GET',
      url: '/v1/rejections',
      tag: 'notices',
      summary: 'Rejected payloads, newest first: size, reasons, when received',
      description: 'A summary per rejection; the payload as received and every reason are at /v1/rejections/{id}.',
      role: ['reader', 'operator'],
      readsOpenOnLoopback: true,
      query: z.object({ cursor: numericCursor, limit: limitParam }).strict(),
      responses: { 200: { description: 'a page', schema: pageOf(rejectionSummary) }, 400: { description: 'bad query', schema: errorSchema } },
      handler: async ({ query }) => {
        const rows = store.notices.listRejectionSummaries({ limit: query.limit, maxReasons: MAX_LISTED_REASONS, ...(query.cursor !== undefined ? { beforeId: query.cursor } : {}) });
        const last = rows[rows.length - 1];
        return { items: rows, nextCursor: rows.length === query.limit && last ? String(last.id) : null };
      },
    }),
    defineRoute({
      method: 'GET',
      url: '/v1/rejections/:id',
      tag: 'notices',
      summary: 'One rejected payload exactly as received, with every reason',
      role: ['reader', 'operator'],
      readsOpenOnLoopback: true,
      params: z.object({ id: z.coerce.number().int().positive().describe('rejection id') }).strict(),
      responses: { 200: { description: 'the rejection', schema: rejectionItem }, 404: { description: 'no such rejection', schema: errorSchema } },
      handler: async ({ params }) => {
        const row = store.notices.getRejection(params.id);
        if (!row) throw new ApiError(404, 'not_found', `no rejection ${params.id}`);
        return { ...row, sizeBytes: Buffer.byteLength(row.raw, 'utf8'), reasonCount: row.reasons.length };
      },
    }),
  ];
}
