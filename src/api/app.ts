import Fastify, { type FastifyBaseLogger, type FastifyInstance } from 'fastify';
import { z } from 'zod';
import type { Config } from '../config/schema.js';
import { toValidationIssues } from '../config/issues.js';
import { createIntake, summarise, type Intake } from '../intake/ingest.js';
import { isWritable } from '../store/database.js';
import type { Store } from '../store/index.js';
import { migrationsCurrent } from '../store/migrations.js';
import { requireRole } from './auth.js';
import { ApiError, errorBody } from './errors.js';

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
}

const pageQuery = z
  .object({
    cursor: z.coerce.number().int().positive().optional(),
    limit: z.coerce.number().int().min(1).max(500).default(50),
    object: z.string().min(1).max(64).optional(),
  })
  .strict();

function parseQuery<T extends z.ZodType>(schema: T, query: unknown): z.infer<T> {
  const r = schema.safeParse(query);
  if (!r.success) throw new ApiError(400, 'bad_request', 'invalid query parameters', toValidationIssues(r.error));
  return r.data;
}

/** Builds the fastify app (routes, auth, error shape) without listening; tests call `inject` on it. */
export async function buildApp(options: AppOptions): Promise<FastifyInstance> {
  const { config, store, clock } = options;
  const service = config.service;
  const intake =
    options.intake ?? createIntake({ notices: store.notices, clock, futureToleranceMin: service.futureToleranceMin });
  const app = Fastify({
    ...(options.logger ? { loggerInstance: options.logger } : { logger: false }),
    bodyLimit: service.bodyLimitBytes,
    requestTimeout: 30_000,
    return503OnClosing: true,
  });

  // Keep the body as text: notices are stored verbatim and parse errors become kept rejections.
  app.addContentTypeParser(['application/json', 'application/x-ndjson'], { parseAs: 'string' }, (_req, body, done) => {
    done(null, body);
  });

  app.setErrorHandler((err, request, reply) => {
    if (err instanceof ApiError) {
      return reply.status(err.statusCode).send(errorBody(err.code, err.message, err.details));
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

  app.get('/healthz', async () => ({ status: 'ok', time: clock().toISOString() }));

  app.get('/readyz', async (_request, reply) => {
    const writable = isWritable(store.db);
    const migrations = migrationsCurrent(store.db, options.migrationsDir);
    const states = store.sources.all();
    const sources = (options.sourceNames ?? states.map((s) => s.source)).map((name) => {
      const s = states.find((x) => x.source === name);
      return {
        source: name,
        lastAttemptAt: s?.lastAttemptAt ?? null,
        lastSuccessAt: s?.lastSuccessAt ?? null,
        consecutiveFailures: s?.consecutiveFailures ?? 0,
        nextAttemptAt: s?.nextAttemptAt ?? null,
        lastError: s?.lastError ?? null,
      };
    });
    const ready = writable && migrations.ok;
    return reply.status(ready ? 200 : 503).send({
      status: ready ? 'ready' : 'not ready',
      database: { writable },
      migrations,
      sources,
      work: store.work.counts(),
    });
  });

  app.post('/v1/notices', async (request, reply) => {
    const caller = requireRole(request, service.tokens, 'feeder');
    const text = typeof request.body === 'string' ? request.body : '';
    const source = `http:${caller.name}`;
    const contentType = String(request.headers['content-type'] ?? '');
    const results = contentType.includes('ndjson') ? intake.ingestNdjson(text, source) : intake.ingestJson(text, source);
    const counts = summarise(results);
    const status = counts.rejected === results.length ? 422 : 202;
    return reply.status(status).send({ ...counts, results });
  });

  app.get('/v1/notices', async (request) => {
    requireRole(request, service.tokens, 'reader', { openOnLoopback: service.openReadsOnLoopback });
    const q = parseQuery(pageQuery, request.query);
    const rows = store.notices.listNotices({
      limit: q.limit,
      ...(q.cursor !== undefined ? { beforeId: q.cursor } : {}),
      ...(q.object !== undefined ? { objectId: q.object } : {}),
    });
    const items = rows.map(({ raw, ...rest }) => ({ ...rest, notice: JSON.parse(raw) as unknown }));
    const last = rows[rows.length - 1];
    return { items, nextCursor: rows.length === q.limit && last ? String(last.id) : null };
  });

  app.get('/v1/rejections', async (request) => {
    requireRole(request, service.tokens, 'reader', { openOnLoopback: service.openReadsOnLoopback });
    const q = parseQuery(pageQuery.omit({ object: true }), request.query);
    const rows = store.notices.listRejections({ limit: q.limit, ...(q.cursor !== undefined ? { beforeId: q.cursor } : {}) });
    const last = rows[rows.length - 1];
    return { items: rows, nextCursor: rows.length === q.limit && last ? String(last.id) : null };
  });

  return app;
}
