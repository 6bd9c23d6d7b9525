import { z } from 'zod';
import type { ApiContext } from '../context.js';
import { ApiError } from '../errors.js';
import { defineRoute, type AnyRouteSpec } from '../route-spec.js';
import { errorSchema, idParams, limitParam, pageOf, requestView, toRequestView } from '../schemas.js';

const objectSummary = z.object({
  id: z.string(),
  state: z.enum(['active', 'retracted', 'retired']),
  firstNoticeAt: z.string(),
  lastNoticeAt: z.string(),
  retractionReason: z.string().nullable(),
  observations: z.number().int(),
  latestAssessment: z.object({ id: z.number().int(), createdAt: z.string() }).nullable(),
});

const observationView = z.object({
  t: z.string(),
  ra: z.number().describe('deg'),
  dec: z.number().describe('deg'),
  sigma: z.number().describe('arcsec'),
  mag: z.number().nullable(),
  band: z.string().nullable(),
  observer: z.object({ lat: z.number(), lon: z.number(), height: z.number() }),
});

const objectDetail = objectSummary.extend({
  orbit: z.unknown().nullable().describe('the orbit block of the latest notice that carried one'),
  tracklet: z.array(observationView),
  assessment: z.unknown().nullable().describe('latest assessment summary: orbit estimate, residuals, windows and score factors per site, reasons'),
  assessments: z.array(z.object({ id: z.number().int(), createdAt: z.string(), observations: z.number().int() })),
  requests: z.array(requestView),
  work: z.object({ state: z.string(), attempts: z.number().int(), lastError: z.string().nullable(), enqueuedAt: z.string() }).nullable(),
});

export function objectRoutes(ctx: ApiContext): AnyRouteSpec[] {
  const { store } = ctx;
  const summarise = (id: string) => {
    const o = store.objects.getObject(id)!;
    const latest = store.requests.latestAssessment(id);
    return {
      id: o.id,
      state: o.state,
      firstNoticeAt: o.firstNoticeAt,
      lastNoticeAt: o.lastNoticeAt,
      retractionReason: o.retractionReason,
      observations: store.objects.observations(id).length,
      latestAssessment: latest ? { id: latest.id, createdAt: latest.createdAt } : null,
    };
  };
  return [
    defineRoute({
      method: 'GET',
      url: '/v1/objects',
      tag: 'review',
      summary: 'Objects, by designation',
      role: ['reader', 'operator', 'scheduler'],
      readsOpenOnLoopback: true,
      query: z
        .object({
          cursor: z.string().max(64).optional().describe('from nextCursor of the previous page'),
          limit: limitParam,
          state: z.enum(['active', 'retracted', 'retired']).optional(),
        })
        .strict(),
      responses: { 200: { description: 'a page', schema: pageOf(objectSummary) }, 400: { description: 'bad query', schema: errorSchema } },
      handler: async ({ query }) => {
        const rows = store.objects.listObjects({
          limit: query.limit,
          ...(query.cursor ? { afterId: query.cursor } : {}),
          ...(query.state ? { state: query.state } : {}),
        });
        const last = rows[rows.length - 1];
        return { items: rows.map((r) => summarise(r.id)), nextCursor: rows.length === query.limit && last ? last.id : null };
      },
    }),
    defineRoute({
      method: 'GET',
      url: '/v1/objects/:id',
      tag: 'review',
      summary: 'One object: tracklet, assessment, requests and history',
      role: ['reader', 'operator', 'scheduler'],
      readsOpenOnLoopback: true,
      params: idParams,
      responses: { 200: { description: 'the object', schema: objectDetail }, 404: { description: 'unknown object', schema: errorSchema } },
      handler: async ({ params }) => {
        const o = store.objects.getObject(params.id);
        if (!o) throw new ApiError(404, 'not_found', `no object ${params.id}`);
        const work = store.work.get(o.id);
        return {
          ...summarise(o.id),
          orbit: o.orbit ? (JSON.parse(o.orbit) as unknown) : null,
          tracklet: store.objects.observations(o.id).map((x) => ({
            t: x.t,
            ra: x.raDeg,
            dec: x.decDeg,
            sigma: x.sigmaArcsec,
            mag: x.mag,
            band: x.band,
            observer: { lat: x.obsLatDeg, lon: x.obsLonDeg, height: x.obsHeightM },
          })),
          assessment: store.requests.latestAssessment(o.id)?.summary ?? null,
          assessments: store.requests.assessments(o.id),
          requests: store.requests.list({ objectId: o.id, limit: 200 }).map(toRequestView),
          work: work ? { state: work.state, attempts: work.attempts, lastError: work.lastError, enqueuedAt: work.enqueuedAt } : null,
        };
      },
    }),
  ];
}
