import { z } from 'zod';
import { isWritable } from '../../store/database.js';
import { migrationsCurrent } from '../../store/migrations.js';
import { WORK_CLASSES } from '../../store/work.js';
import type { ApiContext } from '../context.js';
import { document, json, type ApiApp } from '../http.js';

const sourceView = z.object({
  source: z.string(),
  lastAttemptAt: z.string().nullable(),
  lastSuccessAt: z.string().nullable(),
  consecutiveFailures: z.number().int(),
  nextAttemptAt: z.string().nullable().describe('set while backing off after failures'),
  lastError: z.string().nullable(),
  noticesSeen: z.number().int().describe('notices read from this source since the database was made'),
  noticesRejected: z.number().int(),
  rejectedFraction: z.number().nullable().describe('noticesRejected / noticesSeen; null before any notice'),
  lastAnswer: z
    .object({ notices: z.number().int(), rejected: z.number().int(), rejectedFraction: z.number() })
    .nullable()
    .describe('the last answer (or inbox scan) that held notices'),
});

const failingFile = z.object({ file: z.string(), attempts: z.number().int(), lastError: z.string().nullable(), at: z.string() });

const readiness = z.object({
  status: z.enum(['ready', 'not ready']),
  database: z.object({ writable: z.boolean() }),
  migrations: z.object({ ok: z.boolean(), detail: z.string() }),
  sources: z.array(sourceView),
  inbox: z.object({ failingFiles: z.array(failingFile).describe('files that failed to be read and wait for another attempt (after two they move to rejected/)') }),
  work: z.record(z.string(), z.number()),
  problems: z.array(z.string()).describe('what needs a look although the service can answer: failing sources and files, refused feeds, worker faults'),
  workClasses: z
    .record(z.enum(WORK_CLASSES), z.object({ waiting: z.number().int(), running: z.number().int(), oldestAgeS: z.number() }))
    .describe('the work queue per priority class (new-data, urgent, routine): items waiting and running, and how long the oldest waiting item has waited, s'),
});

/** A feed whose last answer was refused in at least this fraction is named among the problems. */
const REJECTED_FRACTION_PROBLEM = 0.5;

function fraction(part: number, whole: number | null): number | null {
  return whole !== null && whole > 0 ? part / whole : null;
}

export function serviceRoutes(app: ApiApp, ctx: ApiContext): void {
  const { store, clock } = ctx;
  app.route({
    method: 'GET',
    url: '/healthz',
    // Probes stay outside the rate limit, so a busy caller cannot get them refused.
    config: { access: { role: null }, rateLimit: false },
    schema: {
      tags: ['service'],
      summary: 'The process is up',
      response: { 200: json('alive', z.object({ status: z.literal('ok'), time: z.string() })) },
    },
    handler: async () => ({ status: 'ok' as const, time: clock().toISOString() }),
  });
  app.route({
    method: 'GET',
    url: '/readyz',
    // Probes stay outside the rate limit, so a busy caller cannot get them refused.
    config: { access: { role: null }, rateLimit: false },
    schema: {
      tags: ['service'],
      summary: 'Database writable, migrations applied, last poll and refused fraction per source, failing inbox files, problems, the work queue per priority class',
      response: { 200: json('ready', readiness), 503: json('not ready', readiness) },
    },
    handler: async (_request, reply) => {
      const writable = isWritable(store.db);
      const migrations = migrationsCurrent(store.db, ctx.migrationsDir);
      const states = store.sources.all();
      const sources = ctx.sourceNames.map((name) => {
        const s = states.find((x) => x.source === name);
        const seen = s?.noticesSeen ?? 0;
        const rejected = s?.noticesRejected ?? 0;
        const last = s && s.lastPollNotices !== null && s.lastPollNotices > 0 ? { notices: s.lastPollNotices, rejected: s.lastPollRejected ?? 0 } : null;
        return {
          source: name,
          lastAttemptAt: s?.lastAttemptAt ?? null,
          lastSuccessAt: s?.lastSuccessAt ?? null,
          consecutiveFailures: s?.consecutiveFailures ?? 0,
          nextAttemptAt: s?.nextAttemptAt ?? null,
          lastError: s?.lastError ?? null,
          noticesSeen: seen,
          noticesRejected: rejected,
          rejectedFraction: fraction(rejected, seen),
          lastAnswer: last ? { ...last, rejectedFraction: last.rejected / last.notices } : null,
        };
      });
      const failingFiles = store.sources.failingInboxFiles().map((f) => ({ file: f.file, attempts: f.attempts, lastError: f.lastError, at: f.updatedAt }));
      const problems = [
        ...sources.filter((s) => s.consecutiveFailures > 0).map((s) => `${s.source}: ${s.consecutiveFailures} failure(s) in a row, last: ${s.lastError ?? 'unknown'}`),
        ...sources
          .filter((s) => s.lastAnswer !== null && s.lastAnswer.rejectedFraction >= REJECTED_FRACTION_PROBLEM)
          .map((s) => `${s.source}: ${s.lastAnswer!.rejected} of ${s.lastAnswer!.notices} notices in its last ${s.source.startsWith('feed:') ? 'answer' : 'scan'} were refused`),
        ...failingFiles.map((f) => `inbox file ${f.file} failed ${f.attempts} time(s): ${f.lastError ?? 'unknown'}`),
        ...(ctx.problems ? ctx.problems() : []),
      ];
      const ready = writable && migrations.ok;
      return reply
        .status(ready ? 200 : 503)
        .send({ status: ready ? 'ready' : 'not ready', database: { writable }, migrations, sources, inbox: { failingFiles }, work: store.work.counts(), workClasses: store.work.classFigures(clock()), problems });
    },
  });
  app.route({
    method: 'GET',
    url: '/metrics',
    // Probes stay outside the rate limit, so a busy caller cannot get them refused.
    config: { access: { role: null }, rateLimit: false },
    schema: {
      tags: ['service'],
      summary: 'Prometheus text-format metrics',
      response: { 200: document('exposition format 0.0.4', 'text/plain') },
    },
    handler: async (_request, reply) => {
      const { text, contentType } = await ctx.metrics.render();
      return reply.type(contentType).send(text);
    },
  });
}

const deliveryView = z.object({
  id: z.number().int(),
  hookId: z.string(),
  event: z.string(),
  state: z.enum(['pending', 'delivered', 'failed']),
  attempts: z.number().int(),
  nextAttemptAt: z.string(),
  createdAt: z.string(),
  deliveredAt: z.string().nullable(),
  payload: z.unknown(),
  attemptLog: z.array(z.object({ at: z.string(), status: z.number().int().nullable(), error: z.string().nullable(), durationMs: z.number() })),
});

export function deliveryRoutes(app: ApiApp, ctx: ApiContext): void {
  app.route({
    method: 'GET',
    url: '/v1/deliveries',
    config: { access: { role: ['operator', 'reader'], readsOpenOnLoopback: true } },
    schema: {
      tags: ['review'],
      summary: 'Webhook deliveries with every attempt, newest first',
      querystring: z
      .object({
        cursor: z.coerce.number().int().positive().optional(),
        limit: z.coerce.number().int().min(1).max(500).default(50),
        hook: z.string().max(32).optional(),
        state: z.enum(['pending', 'delivered', 'failed']).optional(),
      })
      .strict(),
      response: { 200: json('a page', z.object({ items: z.array(deliveryView), nextCursor: z.string().nullable() })) },
    },
    handler: async (request) => {
      const { query } = request;
      const rows = ctx.store.deliveries.list({
        limit: query.limit,
        ...(query.cursor !== undefined ? { beforeId: query.cursor } : {}),
        ...(query.hook ? { hookId: query.hook } : {}),
        ...(query.state ? { state: query.state } : {}),
      });
      const last = rows[rows.length - 1];
      return {
        items: rows.map((r) => ({ ...r, payload: JSON.parse(r.payload) as unknown })),
        nextCursor: rows.length === query.limit && last ? String(last.id) : null,
      };
    },
  });
}
