import { EstimateRefusedError } from '../on-demand.js';
import { z } from 'zod';
import type { ApiContext } from '../context.js';
import { ApiError } from '../errors.js';
import { json, type ApiApp } from '../http.js';
import { errorSchema, idParams, isoTime, limitParam, pageOf, requestView, toRequestView } from '../schemas.js';

const failureView = z
  .object({
    kind: z
      .enum(['timeout', 'crashed', 'refused', 'error'])
      .describe('timeout: ran over its time limit; crashed: its worker thread stopped; refused: the estimator refused the data; error: it failed otherwise'),
    stage: z.enum(['assessment', 'estimate']).describe('the assessment, or an on-demand estimate (ephemeris, pictures)'),
    message: z.string(),
    at: z.string(),
  })
  .nullable()
  .describe('why the last assessment or on-demand estimate failed; null after a success. A timeout is not retried until new data arrive.');

const objectSummary = z.object({
  id: z.string().describe('the object id used everywhere: its first sender\'s designation, with ~2, ~3... when another sender\'s object had it'),
  sender: z.string().describe('the sender whose designation named it first'),
  designation: z.string(),
  state: z.enum(['active', 'retracted', 'retired']),
  firstNoticeAt: z.string(),
  lastNoticeAt: z.string(),
  retractionReason: z.string().nullable(),
  observations: z.number().int(),
  latestAssessment: z.object({ id: z.number().int(), createdAt: z.string() }).nullable(),
  failure: failureView,
});

const observationView = z.object({
  id: z.number().int(),
  t: z.string(),
  ra: z.number().describe('deg'),
  dec: z.number().describe('deg'),
  sigma: z.number().describe('arcsec'),
  mag: z.number().nullable(),
  band: z.string().nullable(),
  observer: z.object({ lat: z.number(), lon: z.number(), height: z.number() }),
  held: z.boolean().describe('kept but not used by assessments: held back (e.g. a possible misidentification) and not yet confirmed'),
  heldReason: z.string().nullable(),
  confirmedAt: z.string().nullable(),
  confirmedBy: z.string().nullable(),
}).meta({ id: 'Observation', description: 'A stored position of an object\'s tracklet.' });

type StoredObservationRow = ReturnType<ApiContext['store']['objects']['observations']>[number];

function toObservationView(x: StoredObservationRow) {
  return {
    id: x.id,
    t: x.t,
    ra: x.raDeg,
    dec: x.decDeg,
    sigma: x.sigmaArcsec,
    mag: x.mag,
    band: x.band,
    observer: { lat: x.obsLatDeg, lon: x.obsLonDeg, height: x.obsHeightM },
    held: x.heldReason !== null && x.confirmedAt === null,
    heldReason: x.heldReason,
    confirmedAt: x.confirmedAt,
    confirmedBy: x.confirmedBy,
  };
}

const objectDetail = objectSummary.extend({
  names: z
    .array(z.object({ sender: z.string(), designation: z.string(), namedAt: z.string(), link: z.object({ sender: z.string(), designation: z.string() }).nullable() }))
    .describe('every sender\'s designation that leads to this object: its own, and those joined by a notice naming it in linkedTo'),
  orbit: z.unknown().nullable().describe('the orbit block of the latest notice that carried one'),
  tracklet: z.array(observationView),
  assessment: z.unknown().nullable().describe('latest assessment summary: orbit estimate, residuals, windows and score factors per site, reasons'),
  assessments: z.array(z.object({ id: z.number().int(), createdAt: z.string(), observations: z.number().int() })),
  requests: z.array(requestView),
  work: z.object({ state: z.string(), attempts: z.number().int(), lastError: z.string().nullable(), enqueuedAt: z.string() }).nullable(),
});

const MAX_EPHEMERIS_ROWS = 2000;

const ellipse = z
  .object({ major: z.number().describe('1-sigma semi-major axis, arcsec'), minor: z.number().describe('arcsec'), pa: z.number().describe('deg east of north') })
  .nullable();

const ephemerisRow = z.object({
  t: z.string().describe('ISO UTC'),
  ra: z.number().describe('deg, astrometric ICRS seen from the site'),
  dec: z.number().describe('deg'),
  raRate: z.number().describe('arcsec/s, dRA/dt x cos Dec'),
  decRate: z.number().describe('arcsec/s'),
  unc: ellipse.describe('1-sigma uncertainty ellipse on the sky (estimate)'),
  extent99: ellipse.optional().describe('ellipse holding 99 % of the virtual orbits'),
  mag: z.number().nullable().describe('V'),
  magSigma: z.number().nullable(),
  delta: z.number().describe('geocentric distance, au'),
  r: z.number().describe('heliocentric distance, au'),
  phase: z.number().describe('phase angle, deg'),
  elong: z.number().describe('solar elongation, deg'),
  alt: z.number().describe('apparent altitude with refraction, deg'),
  az: z.number().describe('azimuth from north through east, deg'),
  airmass: z.number().nullable(),
}).meta({ id: 'EphemerisRow', description: 'One row of an ephemeris computed on demand: an estimate with its uncertainty, not an impact prediction.' });

const ephemerisQuery = z
  .object({
    site: z.string().min(1).max(32).describe('site id'),
    start: isoTime().optional().describe('default: now'),
    end: isoTime().optional().describe('default: start + 24 h'),
    step: z.coerce.number().min(1).max(1440).default(10).describe('minutes'),
  })
  .strict();

export function objectRoutes(app: ApiApp, ctx: ApiContext): void {
  const { store } = ctx;
  const summarise = (id: string) => {
    const o = store.objects.getObject(id)!;
    const latest = store.requests.latestAssessment(id);
    return {
      id: o.id,
      sender: o.sender,
      designation: o.designation,
      state: o.state,
      firstNoticeAt: o.firstNoticeAt,
      lastNoticeAt: o.lastNoticeAt,
      retractionReason: o.retractionReason,
      observations: store.objects.observations(id).length,
      latestAssessment: latest ? { id: latest.id, createdAt: latest.createdAt } : null,
      failure: o.failure ? { kind: o.failure.kind, stage: o.failure.stage, message: o.failure.message, at: o.failure.at } : null,
    };
  };
  app.route({
    method: 'GET',
    url: '/v1/objects/:id/ephemeris',
    config: { access: { role: ['reader', 'operator', 'scheduler'], readsOpenOnLoopback: true } },
    schema: {
      tags: ['review'],
      summary: 'Ephemeris of an object from a site, computed now, with its uncertainty',
      description: 'The nominal position, rates and V magnitude every `step` minutes with the ensemble spread as a 1-sigma ellipse. An estimate from short-arc astrometry, not an impact prediction.',
      params: idParams,
      querystring: ephemerisQuery,
      response: {
        200: json('the table', z.object({ objectId: z.string(), siteId: z.string(), method: z.string(), rows: z.array(ephemerisRow) })),
        400: json('bad query', errorSchema),
        404: json('unknown object or site', errorSchema),
        422: json('the object cannot be estimated from what is stored, or its estimate ran over the time limit', errorSchema),
        503: json('the on-demand estimate worker is busy past a short wait (or cannot start), or the service is stopping; retry-after says when to ask again', errorSchema),
      },
    },
    handler: async (request) => {
      const { params, query } = request;
      const site = ctx.config.sites.find((s) => s.id === query.site);
      if (!site) throw new ApiError(404, 'not_found', `no site ${query.site}`, [{ path: 'query.site', message: `expected one of ${ctx.config.sites.map((s) => s.id).join(', ')}` }]);
      if (!store.objects.getObject(params.id)) throw new ApiError(404, 'not_found', `no object ${params.id}`);
      const start = Date.parse(query.start ?? ctx.clock().toISOString());
      const end = query.end ? Date.parse(query.end) : start + 24 * 3600_000;
      if (end < start) throw new ApiError(400, 'bad_request', 'end is before start', [{ path: 'query.end', message: 'must not be before start' }]);
      const n = Math.floor((end - start) / (query.step * 60_000)) + 1;
      if (n > MAX_EPHEMERIS_ROWS)
        throw new ApiError(400, 'bad_request', `${n} rows asked; at most ${MAX_EPHEMERIS_ROWS}`, [{ path: 'query.step', message: 'use a larger step or a shorter range' }]);
      const times = Array.from({ length: n }, (_, k) => new Date(start + k * query.step * 60_000));
      let answer;
      try {
        answer = await ctx.onDemand.ephemeris(params.id, site.location, times);
      } catch (err) {
        if (err instanceof EstimateRefusedError) throw new ApiError(422, 'cannot_estimate', `object ${params.id} cannot be estimated: ${err.message}`);
        throw err;
      }
      if (!answer) throw new ApiError(422, 'cannot_estimate', `object ${params.id} has no observations or orbit to estimate from`);
      return { objectId: params.id, siteId: site.id, method: answer.method, rows: answer.rows };
    },
  });
  app.route({
    method: 'POST',
    url: '/v1/objects/:id/observations/:obsId/confirm',
    config: { access: { role: 'operator' } },
    schema: {
      tags: ['review'],
      summary: 'Confirm a held position of an object (operator)',
      description: 'A follow-up position outside the predicted 5-sigma region is kept but held back as a possible misidentification. Confirming it says the object measured is this one: assessments use it from now on, and the object is replanned at once.',
      params: z.object({ id: z.string().min(1).max(128).describe('object id'), obsId: z.coerce.number().int().positive().describe('observation id, as in the object tracklet') }).strict(),
      body: z.object({ note: z.string().max(1000).optional() }).strict(),
      response: {
        200: json('confirmed; the object is replanned', z.object({ observation: observationView, replanQueued: z.boolean() })),
        404: json('no such object or observation', errorSchema),
        409: json('the observation is not held (never was, or already confirmed)', errorSchema),
      },
    },
    handler: async (request) => {
      const { params, body } = request;
      const caller = request.caller;
      if (!store.objects.getObject(params.id)) throw new ApiError(404, 'not_found', `no object ${params.id}`);
      const now = ctx.clock();
      const who = `${caller?.name ?? 'operator'}${body.note ? `: ${body.note}` : ''}`;
      const result = store.db.transaction(() => {
        const r = store.objects.confirmObservation(params.id, params.obsId, who, now);
        if (r.status === 'confirmed') store.work.enqueueNewData([params.id], now);
        return r;
      })();
      if (result.status === 'not_found') throw new ApiError(404, 'not_found', `object ${params.id} has no observation ${params.obsId}`);
      if (result.status === 'not_held') {
        const why = result.observation.confirmedAt !== null ? `was confirmed at ${result.observation.confirmedAt} by ${result.observation.confirmedBy ?? 'an operator'}` : 'is not held back';
        throw new ApiError(409, 'not_held', `observation ${params.obsId} of ${params.id} ${why}`);
      }
      ctx.workQueued();
      return { observation: toObservationView(result.observation), replanQueued: true };
    },
  });
  app.route({
    method: 'GET',
    url: '/v1/objects',
    config: { access: { role: ['reader', 'operator', 'scheduler'], readsOpenOnLoopback: true } },
    schema: {
      tags: ['review'],
      summary: 'Objects, by designation',
      querystring: z
      .object({
        cursor: z.string().max(64).optional().describe('from nextCursor of the previous page'),
        limit: limitParam,
        state: z.enum(['active', 'retracted', 'retired']).optional(),
      })
      .strict(),
      response: { 200: json('a page', pageOf(objectSummary)), 400: json('bad query', errorSchema) },
    },
    handler: async (request) => {
      const { query } = request;
      const rows = store.objects.listObjects({
        limit: query.limit,
        ...(query.cursor ? { afterId: query.cursor } : {}),
        ...(query.state ? { state: query.state } : {}),
      });
      const last = rows[rows.length - 1];
      return { items: rows.map((r) => summarise(r.id)), nextCursor: rows.length === query.limit && last ? last.id : null };
    },
  });
  app.route({
    method: 'GET',
    url: '/v1/objects/:id',
    config: { access: { role: ['reader', 'operator', 'scheduler'], readsOpenOnLoopback: true } },
    schema: {
      tags: ['review'],
      summary: 'One object: tracklet, assessment, requests and history',
      params: idParams,
      response: { 200: json('the object', objectDetail), 404: json('unknown object', errorSchema) },
    },
    handler: async (request) => {
      const { params } = request;
      const o = store.objects.getObject(params.id);
      if (!o) throw new ApiError(404, 'not_found', `no object ${params.id}`);
      const work = store.work.get(o.id);
      return {
        ...summarise(o.id),
        names: store.objects.names(o.id),
        orbit: o.orbit ? (JSON.parse(o.orbit) as unknown) : null,
        tracklet: store.objects.observations(o.id).map(toObservationView),
        assessment: store.requests.latestAssessment(o.id)?.summary ?? null,
        assessments: store.requests.assessments(o.id),
        requests: store.requests.list({ objectId: o.id, limit: 200 }).map(toRequestView),
        work: work ? { state: work.state, attempts: work.attempts, lastError: work.lastError, enqueuedAt: work.enqueuedAt } : null,
      };
    },
  });
}
