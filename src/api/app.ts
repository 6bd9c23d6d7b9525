import rateLimit from '@fastify/rate-limit';
import swagger from '@fastify/swagger';
import type { IncomingMessage } from 'node:http';
import Fastify, { type FastifyBaseLogger, type FastifyReply, type FastifyRequest, type RouteOptions } from 'fastify';
import { hasZodFastifySchemaValidationErrors, jsonSchemaTransform, jsonSchemaTransformObject, serializerCompiler, validatorCompiler, type ZodTypeProvider } from 'fastify-type-provider-zod';
import type { z } from 'zod';
import { toValidationIssue } from '../config/issues.js';
import type { Config } from '../config/schema.js';
import { createIntake, type Intake } from '../intake/ingest.js';
import type { ObjectEstimate } from '../orbit/estimate-types.js';
import type { Store } from '../store/index.js';
import { createServiceMetrics, type ServiceMetrics } from '../telemetry/metrics.js';
import { authenticate, lacksRole } from './auth.js';
import type { ApiContext } from './context.js';
import { CAUTIONS, docRoutes } from './docs-page.js';
import { ApiError, errorBody } from './errors.js';
import { json, type Access, type ApiApp } from './http.js';
import { EstimateBusyError, onDemandFromEstimates, type OnDemandEstimates } from './on-demand.js';
import { noticeRoutes } from './routes/notices.js';
import { objectRoutes } from './routes/objects.js';
import { pageRoutes } from './routes/pages.js';
import { pictureRoutes } from './routes/pictures.js';
import { requestRoutes } from './routes/requests.js';
import { schemaRoutes } from './routes/schemas.js';
import { siteRoutes } from './routes/sites.js';
import { deliveryRoutes, serviceRoutes } from './routes/service.js';
import { errorSchema } from './schemas.js';

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
  /** Extra routes from other parts of the service (tests). */
  extraRoutes?: (app: ApiApp, ctx: ApiContext) => void;
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

/** Longest path parameter routed to a route's schema; a longer one is answered 414. */
export const MAX_PATH_PARAM_LENGTH = 256;

/** Callers (token names and addresses) the rate limit keeps count of at once; the least recently seen is forgotten first. */
export const RATE_LIMIT_KEYS = 10_000;

function hasBody(request: FastifyRequest): boolean {
  const length = request.headers['content-length'];
  return request.headers['transfer-encoding'] !== undefined || (length !== undefined && length !== '0');
}

/** A validation error's JSON pointer (`/observations/0/t`) as a zod path. */
function pathOf(pointer: string): (string | number)[] {
  return pointer
    .split('/')
    .slice(1)
    .filter((p) => p !== '')
    .map((p) => (/^\d+$/.test(p) ? Number(p) : p.replace(/~1/g, '/').replace(/~0/g, '~')));
}

function roleSentence(access: Access | undefined, method: string): string {
  if (!access || access.role === null) return 'Open to anyone.';
  const roles = typeof access.role === 'string' ? [access.role] : access.role;
  const open = method === 'GET' && access.readsOpenOnLoopback ? ' Open to loopback callers when `openReadsOnLoopback` is set.' : '';
  const page = method === 'GET' && access.acceptsPageToken ? ' A browser may give the token as `?token=` instead; the page passes it on to its pictures and links.' : '';
  return `Needs a bearer token with the ${roles.map((r) => `\`${r}\``).join(' or ')} role.${open}${page}`;
}

/**
 * Adds to a route's schema the answers every route of its kind can give (400
 * for input that fails its schema, 401 and 403 for a route with a role, 413
 * and 415 for a body, 429 beyond the rate limit, 503 while the service stops,
 * 500), who may call it, and its security requirement.
 */
const documented = new WeakSet<object>();
function documentCommonAnswers(route: RouteOptions): void {
  const schema = route.schema;
  // A GET route's HEAD twin shares its schema: document it once.
  if (!schema || documented.has(schema)) return;
  documented.add(schema);
  const access = route.config?.access;
  const method = Array.isArray(route.method) ? String(route.method[0]) : String(route.method);
  const response = ((schema.response as Record<string, unknown> | undefined) ??= {});
  const add = (status: number, description: string) => {
    if (!(status in response)) response[status] = json(description, errorSchema);
  };
  const hasInput = schema.params !== undefined || schema.querystring !== undefined || schema.body !== undefined || access?.rawBody === true;
  if (hasInput) add(400, 'input that fails its schema: details lists each field and what was expected');
  if (route.url.includes(':')) add(414, `a path parameter longer than ${MAX_PATH_PARAM_LENGTH} characters`);
  if (access && access.role !== null) {
    add(401, 'no token, or an unknown one');
    add(403, 'a token without the role this route needs');
  }
  if (schema.body !== undefined || access?.rawBody) {
    add(413, 'a body over the size limit (bodyLimitBytes)');
    add(415, 'a media type other than application/json, application/ndjson, application/x-ndjson or text/plain');
  }
  if ((route.config as { rateLimit?: unknown } | undefined)?.rateLimit !== false) add(429, 'over the rate limit (rateLimitPerMinute per caller); retry-after says when to retry');
  add(500, 'a fault of the service; see its log');
  add(503, 'the service is stopping; retry-after says when to retry');
  schema.description = [schema.description, roleSentence(access, method)].filter(Boolean).join('\n\n');
  if (access && access.role !== null) schema.security = [{ bearer: [] }];
}

/** Builds the fastify app (routes, auth, error shape, OpenAPI) without listening; tests call `inject` on it. */
export async function buildApp(options: AppOptions): Promise<ApiApp> {
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
    // A request arriving while the app closes gets our own 503 (below), in the one error shape.
    return503OnClosing: false,
    // Path parameters up to this length reach their schemas (identifiers are at most 128 characters); longer ones are refused before routing.
    routerOptions: { maxParamLength: MAX_PATH_PARAM_LENGTH },
    // Errors found before routing (an address that is not a valid URL, an over-long path parameter) in the one error shape too.
    frameworkErrors: (err, _request, reply) => {
      const tooLong = err.code === 'FST_ERR_MAX_PARAM_LENGTH';
      void (reply as unknown as FastifyReply)
        .status(tooLong ? 414 : 400)
        .send(errorBody(tooLong ? 'uri_too_long' : 'bad_request', tooLong ? `a path parameter is longer than ${MAX_PATH_PARAM_LENGTH} characters` : 'the address is not a valid URL'));
    },
  }).withTypeProvider<ZodTypeProvider>();
  app.setValidatorCompiler(validatorCompiler);
  app.setSerializerCompiler(serializerCompiler);
  app.decorateRequest('caller', null);

  // Keep bodies as bytes: notices are stored verbatim, a payload that is not UTF-8 is refused by name, and parse errors become kept rejections.
  app.removeContentTypeParser(['application/json', 'text/plain']);
  app.addContentTypeParser([...BODY_MEDIA_TYPES], { parseAs: 'buffer' }, (_req, body, done) => {
    done(null, body);
  });

  let closing = false;
  app.addHook('preClose', async () => {
    closing = true;
  });
  // Who is calling, from the headers alone: the rate limit counts verified callers by name and
  // everyone else by address, so a changed header cannot open a fresh allowance.
  const authProblems = new WeakMap<object, ApiError>();
  app.addHook('onRequest', async (request, reply) => {
    if (closing) {
      reply.header('connection', 'close').header('retry-after', '5');
      throw new ApiError(503, 'stopping', 'the service is stopping; retry in a few seconds', { retryAfterS: 5 });
    }
    const access = request.routeOptions.config.access;
    if (!access || access.role === null) return;
    const isGet = request.method === 'GET' || request.method === 'HEAD';
    const who = authenticate(request, service.tokens, {
      openOnLoopback: isGet && access.readsOpenOnLoopback === true && service.openReadsOnLoopback,
      pageToken: pageTokens.get(request.raw) ?? null,
      acceptsPageToken: isGet && access.acceptsPageToken === true,
    });
    if (who instanceof ApiError) authProblems.set(request, who);
    else request.caller = who;
  });
  await app.register(rateLimit, {
    max: service.rateLimitPerMinute,
    timeWindow: 60_000,
    cache: RATE_LIMIT_KEYS,
    keyGenerator: (request) => (request.caller && request.caller.name !== 'loopback' ? `token:${request.caller.name}` : `address:${request.ip}`),
    errorResponseBuilder: (_request, context) => {
      const wait = Math.max(1, Math.ceil(context.ttl / 1000));
      return new ApiError(429, 'rate_limited', `too many requests (${context.max} a minute); retry in ${wait} s`, { retryAfterS: wait });
    },
  });
  // Refused callers are answered before any body is read (after the rate limit has counted them).
  app.addHook('preParsing', async (request, reply, payload) => {
    const access = request.routeOptions.config.access;
    if (!access || access.role === null) return payload;
    const refusal = authProblems.get(request) ?? (request.caller ? lacksRole(request.caller, access.role) : null);
    if (refusal) {
      // The unread body would otherwise be drained from the connection after the answer.
      if (hasBody(request)) reply.header('connection', 'close');
      throw refusal;
    }
    return payload;
  });
  // A JSON body is read as bytes (above) and parsed here, so its schema validates the object.
  app.addHook('preValidation', async (request) => {
    const access = request.routeOptions.config.access;
    if (access?.rawBody || !request.routeOptions.schema?.body || !Buffer.isBuffer(request.body)) return;
    const text = request.body.toString('utf8');
    try {
      request.body = text.trim() === '' ? {} : (JSON.parse(text) as unknown);
    } catch (err) {
      throw new ApiError(400, 'bad_request', `body is not valid JSON: ${(err as Error).message}`, [{ path: 'body', message: 'not valid JSON' }]);
    }
  });
  // Every route documents every answer it can give: the shared ones are added here, before the
  // OpenAPI document is made, with who may call it.
  app.addHook('onRoute', (route) => documentCommonAnswers(route));
  await app.register(swagger, {
    openapi: {
      openapi: '3.1.0',
      info: {
        title: 'nightjar',
        version: API_VERSION,
        description: `Observation requests for newly found near-Earth objects, for the observatory's queue software.\n\n${CAUTIONS.join('\n\n')}`,
      },
      servers: [{ url: '/' }],
      components: {
        securitySchemes: { bearer: { type: 'http', scheme: 'bearer', description: 'A token from the service configuration (stored there as its SHA-256).' } },
      },
    },
    transform: jsonSchemaTransform,
    transformObject: jsonSchemaTransformObject,
  });

  app.setErrorHandler((err, request, reply) => {
    if (err instanceof ApiError) {
      if (err.statusCode === 429 || err.statusCode === 503) reply.header('retry-after', String((err.details as { retryAfterS?: number } | null)?.retryAfterS ?? 5));
      return reply.status(err.statusCode).send(errorBody(err.code, err.message, err.details));
    }
    if (err instanceof EstimateBusyError) {
      reply.header('retry-after', String(err.retryAfterS));
      return reply.status(503).send(errorBody('estimate_busy', err.message, { retryAfterS: err.retryAfterS }));
    }
    if (hasZodFastifySchemaValidationErrors(err)) {
      const where = err.validationContext === 'querystring' ? 'query' : (err.validationContext ?? 'input');
      const details = err.validation.map((v) => {
        const issue = toValidationIssue({ ...v.params, code: v.keyword, message: v.message, path: pathOf(v.instancePath) } as unknown as z.core.$ZodIssue);
        return { path: issue.path === '(root)' ? where : `${where}.${issue.path}`, message: issue.message };
      });
      return reply.status(400).send(errorBody('bad_request', `invalid ${where}: ${details.map((d) => `${d.path}: ${d.message}`).join('; ')}`, details));
    }
    const e = err as { statusCode?: number; code?: string; message: string };
    const status = typeof e.statusCode === 'number' && e.statusCode >= 400 ? e.statusCode : 500;
    if (status >= 500) {
      request.log.error({ err, method: request.method, url: request.url, params: request.params }, 'request failed');
      return reply.status(500).send(errorBody('internal', 'internal error; see the service log'));
    }
    const code = status === 413 ? 'payload_too_large' : status === 415 ? 'unsupported_media_type' : 'bad_request';
    return reply.status(status).send(errorBody(code, e.message));
  });

  app.setNotFoundHandler((request, reply) => {
    return reply.status(404).send(errorBody('not_found', `no route ${request.method} ${request.url.split('?')[0]}`));
  });

  serviceRoutes(app, ctx);
  noticeRoutes(app, ctx);
  requestRoutes(app, ctx);
  siteRoutes(app, ctx);
  objectRoutes(app, ctx);
  deliveryRoutes(app, ctx);
  pictureRoutes(app, ctx);
  pageRoutes(app, ctx);
  schemaRoutes(app);
  options.extraRoutes?.(app, ctx);
  docRoutes(app);
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
  return app;
}
