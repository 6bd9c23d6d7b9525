import type { ObjectEstimate } from '../orbit/estimate-types.js';
import { EstimateBusyError, onDemandFromEstimates, type OnDemandEstimates } from './on-demand.js';
import { createHash } from 'node:crypto';
import type { IncomingMessage } from 'node:http';
import Fastify, { type FastifyBaseLogger, type FastifyInstance } from 'fastify';
import { z } from 'zod';
import type { Config } from '../config/schema.js';
import { createIntake, type Intake } from '../intake/ingest.js';
import type { Store } from '../store/index.js';
import { createServiceMetrics, type ServiceMetrics } from '../telemetry/metrics.js';
import type { ApiContext } from './context.js';
import { CAUTIONS, renderDocsPage } from './docs-page.js';
import { ApiError, errorBody } from './errors.js';
import { createRateLimiter } from './rate-limit.js';
import { defineRoute, openApiDocument, registerRoutes, type AnyRouteSpec } from './route-spec.js';
import { noticeRoutes } from './routes/notices.js';
import { objectRoutes } from './routes/objects.js';
import { pageRoutes } from './routes/pages.js';
import { pictureRoutes } from './routes/pictures.js';
import { requestRoutes } from './routes/requests.js';
import { siteRoutes } from './routes/sites.js';
import { deliveryRoutes, serviceRoutes } from './routes/service.js';

export interface AppOptions {
  config: Config;
  store: Store;
  clock: () => Date;
  migrationsDir: string;
  /** Sources the service polls, so /readyz can report each (inbox, feed:<id>). */
  sourceNames?: string[];
  /** A pino logger for request logs; none in tests unless given. */
  logger?: FastifyBaseLogger;
  intake?: Intake;
  metrics?: ServiceMetrics;
  /** Extra routes from other parts of the service. */
  extraRoutes?: (ctx: ApiContext) => AnyRouteSpec[];
  /** On-demand estimates (see ApiContext); the service passes its worker-thread ones. */
  onDemand?: OnDemandEstimates;
  /** Or a synchronous estimate source answered on the calling thread (tests); none by default. */
  estimateFor?: (objectId: string) => ObjectEstimate | null;
  /** Called when a route puts objects on the work queue (an outcome, a confirmed position); the service starts assessing. */
  onWorkQueued?: () => void;
  /** Faults outside the API for /readyz to name (the service passes its worker pools' health). */
  problems?: () => string[];
}

export const API_VERSION = '1.0.0';

/** Media types a body may have; each is read as bytes (the routes decode them). */
export const BODY_MEDIA_TYPES = ['application/json', 'application/ndjson', 'application/x-ndjson', 'text/plain'] as const;

/** Liveness, readiness and metrics: outside the rate limit, so a busy client cannot get its own probes refused. */
export const UNLIMITED_ROUTES: ReadonlySet<string> = new Set(['/healthz', '/readyz', '/metrics']);

/** Builds the fastify app (routes, auth, error shape, OpenAPI) without listening; tests call `inject` on it. */
export async function buildApp(options: AppOptions): Promise<FastifyInstance> {
  const { config, store, clock } = options;
  const service = config.service;
  const metrics = options.metrics ?? createServiceMetrics();
  const intake =
    options.intake ??
    createIntake({
      notices: store.notices,
      clock,
      futureToleranceMin: service.futureToleranceMin,
      observe: (source, r) => metrics.noticesReceived.inc({ source: source.split(':')[0] ?? source, result: r.status }),
    });
  const ctx: ApiContext = {
    config,
    store,
    intake,
    clock,
    metrics,
    migrationsDir: options.migrationsDir,
    sourceNames: options.sourceNames ?? ['inbox', ...service.feeds.map((f) => `feed:${f.id}`)],
    onDemand: options.onDemand ?? onDemandFromEstimates(options.estimateFor ?? (() => null)),
    workQueued: options.onWorkQueued ?? (() => {}),
    ...(options.problems ? { problems: options.problems } : {}),
  };

  // A page opened in a browser may carry its reader token as ?token=. It is taken out of the
  // address before routing, so it is never logged, and kept here for the route's check.
  const pageTokens = new WeakMap<IncomingMessage, string>();
  const app = Fastify({
    ...(options.logger ? { loggerInstance: options.logger } : { logger: false }),
    rewriteUrl: (req) => {
      const url = req.url ?? '/';
      const q = url.indexOf('?');
      if (q < 0 || !/(^|&)token=/.test(url.slice(q + 1))) return url;
      const params = new URLSearchParams(url.slice(q + 1));
      const token = params.get('token');
      params.delete('token');
      if (token !== null) pageTokens.set(req, token);
      const rest = params.toString();
      return rest === '' ? url.slice(0, q) : `${url.slice(0, q)}?${rest}`;
    },
    bodyLimit: service.bodyLimitBytes,
    requestTimeout: 30_000,
    connectionTimeout: 60_000,
    return503OnClosing: true,
  });

  // Keep bodies as bytes: notices are stored verbatim, a payload that is not UTF-8 is refused by name, and parse errors become kept rejections.
  app.removeContentTypeParser(['application/json', 'text/plain']);
  app.addContentTypeParser([...BODY_MEDIA_TYPES], { parseAs: 'buffer' }, (_req, body, done) => {
    done(null, body);
  });

  const limiter = createRateLimiter(service.rateLimitPerMinute);
  app.addHook('onRequest', async (request, reply) => {
    // Probes are never refused for a busy caller's sake.
    if (UNLIMITED_ROUTES.has(request.routeOptions.url ?? '')) return;
    const auth = request.headers.authorization;
    const key = typeof auth === 'string' ? `t:${createHash('sha256').update(auth).digest('hex')}` : `ip:${request.ip}`;
    const wait = limiter.take(key);
    if (wait > 0) {
      reply.header('retry-after', String(wait));
      throw new ApiError(429, 'rate_limited', `too many requests; retry in ${wait} s`, { retryAfterS: wait });
    }
  });

  app.setErrorHandler((err, request, reply) => {
    if (err instanceof ApiError) {
      return reply.status(err.statusCode).send(errorBody(err.code, err.message, err.details));
    }
    if (err instanceof EstimateBusyError) {
      reply.header('retry-after', String(err.retryAfterS));
      return reply.status(503).send(errorBody('estimate_busy', err.message, { retryAfterS: err.retryAfterS }));
    }
    const e = err as { statusCode?: number; code?: string; message: string };
    const status = typeof e.statusCode === 'number' && e.statusCode >= 400 ? e.statusCode : 500;
    if (status >= 500) {
      request.log.error({ err, method: request.method, url: request.url, params: request.params }, 'request failed');
      return reply.status(status).send(errorBody('internal', 'internal error; see the service log'));
    }
    const code = status === 413 ? 'payload_too_large' : status === 415 ? 'unsupported_media_type' : 'bad_request';
    return reply.status(status).send(errorBody(code, e.message));
  });

  app.setNotFoundHandler((request, reply) => {
    return reply.status(404).send(errorBody('not_found', `no route ${request.method} ${request.url.split('?')[0]}`));
  });

  const routes: AnyRouteSpec[] = [
    ...serviceRoutes(ctx),
    ...noticeRoutes(ctx),
    ...requestRoutes(ctx),
    ...siteRoutes(ctx),
    ...objectRoutes(ctx),
    ...deliveryRoutes(ctx),
    ...pictureRoutes(ctx),
    ...pageRoutes(ctx),
    ...(options.extraRoutes ? options.extraRoutes(ctx) : []),
  ];
  const info = {
    title: 'nightjar',
    version: API_VERSION,
    description: `Observation requests for newly found near-Earth objects, for the observatory's queue software.\n\n${CAUTIONS.join('\n\n')}`,
  };
  const docRoutes: AnyRouteSpec[] = [
    defineRoute({
      method: 'GET',
      url: '/v1/openapi.json',
      tag: 'service',
      summary: 'This API as an OpenAPI 3.1 document',
      role: null,
      responses: { 200: { description: 'the document', schema: z.object({}).passthrough() } },
      handler: async () => openApiDocument([...routes, ...docRoutes], info),
    }),
    defineRoute({
      method: 'GET',
      url: '/v1/docs',
      tag: 'service',
      summary: 'This API as a readable page, with the cautions',
      role: null,
      produces: 'text/html',
      responses: { 200: { description: 'HTML', schema: z.string() } },
      handler: async ({ reply }) =>
        reply.type('text/html; charset=utf-8').send(renderDocsPage(openApiDocument([...routes, ...docRoutes], info) as Parameters<typeof renderDocsPage>[0])),
    }),
  ];
  metrics.gauge('nightjar_queue_depth', 'Queued requests per site.', ['site'], () =>
    config.sites.map((s) => ({ labels: { site: s.id }, value: store.requests.queueDepth().find((d) => d.siteId === s.id)?.n ?? 0 })),
  );
  metrics.gauge('nightjar_notices_stored', 'Notices stored in the database.', [], () => [{ labels: {}, value: store.notices.counts().notices }]);
  metrics.gauge('nightjar_rejections_stored', 'Rejected payloads kept in the database.', [], () => [{ labels: {}, value: store.notices.counts().rejections }]);
  metrics.gauge('nightjar_work_items', 'Work queue items by state.', ['state'], () =>
    Object.entries(store.work.counts()).map(([state, n]) => ({ labels: { state }, value: n })),
  );
  metrics.gauge('nightjar_source_rejected_fraction', 'Fraction of a source\'s notices refused: over="all" since the database was made, over="last_answer" in its last answer that held notices.', ['source', 'over'], () =>
    store.sources.all().flatMap((s) => [
      ...(s.noticesSeen > 0 ? [{ labels: { source: s.source, over: 'all' }, value: s.noticesRejected / s.noticesSeen }] : []),
      ...(s.lastPollNotices ? [{ labels: { source: s.source, over: 'last_answer' }, value: (s.lastPollRejected ?? 0) / s.lastPollNotices }] : []),
    ]),
  );
  metrics.gauge('nightjar_inbox_failing_files', 'Inbox files that failed to be read and wait for another attempt.', [], () => [
    { labels: {}, value: store.sources.failingInboxFiles().length },
  ]);
  metrics.gauge('nightjar_work_class_waiting', 'Work items waiting per priority class (new-data, urgent, routine).', ['class'], () =>
    Object.entries(store.work.classFigures(clock())).map(([c, f]) => ({ labels: { class: c }, value: f.waiting })),
  );
  metrics.gauge('nightjar_work_class_oldest_age_seconds', 'How long the oldest waiting work item of each priority class has waited, seconds.', ['class'], () =>
    Object.entries(store.work.classFigures(clock())).map(([c, f]) => ({ labels: { class: c }, value: f.oldestAgeS })),
  );
  metrics.gauge('nightjar_source_consecutive_failures', 'Consecutive failures per polled source (backoff while > 0).', ['source'], () =>
    store.sources.all().map((s) => ({ labels: { source: s.source }, value: s.consecutiveFailures })),
  );
  registerRoutes(app, [...routes, ...docRoutes], {
    tokens: service.tokens,
    openReadsOnLoopback: service.openReadsOnLoopback,
    pageTokenOf: (request) => pageTokens.get(request.raw) ?? null,
  });
  return app;
}
