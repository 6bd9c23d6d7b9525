import { z } from 'zod';
import { summarise } from '../../intake/ingest.js';
import type { ApiContext } from '../context.js';
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

const rejectionItem = z.object({
  id: z.number().int(),
  source: z.string(),
  receivedAt: z.string(),
  sender: z.string().nullable(),
  noticeId: z.string().nullable(),
  raw: z.string().describe('the payload exactly as received'),
  reasons: z.array(z.object({ path: z.string(), message: z.string() })),
});

const numericCursor = z.coerce.number().int().positive().optional().describe('from nextCursor of the previous page');

export function noticeRoutes(ctx: ApiContext): AnyRouteSpec[] {
  const { store, intake } = ctx;
  return [
    defineRoute({
      method: 'POST',
      url: '/v1/notices',
      tag: 'notices',
      summary: 'Submit discovery notices (one, an array, or NDJSON)',
      description:
        'Each notice is validated (format nightjar.notice.v1) and stored, or kept as a rejection with every reason. The same sender and noticeId is stored once. 202 when at least one notice was accepted or was a duplicate, 422 when every notice was rejected.',
      role: 'feeder',
      rawBody: true,
      responses: {
        202: { description: 'a result per notice', schema: intakeAnswer },
        401: { description: 'no or unknown token', schema: errorSchema },
        403: { description: 'token without the feeder role', schema: errorSchema },
        413: { description: 'body over the size limit', schema: errorSchema },
        422: { description: 'every notice rejected; the reasons are in results', schema: intakeAnswer },
      },
      handler: async ({ request, reply, caller }) => {
        const text = typeof request.body === 'string' ? request.body : '';
        const source = `http:${caller?.name ?? 'unknown'}`;
        const contentType = String(request.headers['content-type'] ?? '');
        const results = contentType.includes('ndjson') ? intake.ingestNdjson(text, source) : intake.ingestJson(text, source);
        const counts = summarise(results);
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
      summary: 'Rejected payloads with their reasons, newest first',
      role: ['reader', 'operator'],
      readsOpenOnLoopback: true,
      query: z.object({ cursor: numericCursor, limit: limitParam }).strict(),
      responses: { 200: { description: 'a page', schema: pageOf(rejectionItem) }, 400: { description: 'bad query', schema: errorSchema } },
      handler: async ({ query }) => {
        const rows = store.notices.listRejections({ limit: query.limit, ...(query.cursor !== undefined ? { beforeId: query.cursor } : {}) });
        const last = rows[rows.length - 1];
        return { items: rows, nextCursor: rows.length === query.limit && last ? String(last.id) : null };
      },
    }),
  ];
}
