import { z } from 'zod';
import { isWritable } from '../../store/database.js';
import { migrationsCurrent } from '../../store/migrations.js';
import type { ApiContext } from '../context.js';
import { defineRoute, type AnyRouteSpec } from '../route-spec.js';

const sourceView = z.object({
  source: z.string(),
  lastAttemptAt: z.string().nullable(),
  lastSuccessAt: z.string().nullable(),
  consecutiveFailures: z.number().int(),
  nextAttemptAt: z.string().nullable().describe('set while backing off after failures'),
  lastError: z.string().nullable(),
});

const readiness = z.object({
  status: z.enum(['ready', 'not ready']),
  database: z.object({ writable: z.boolean() }),
  migrations: z.object({ ok: z.boolean(), detail: z.string() }),
  sources: z.array(sourceView),
  work: z.record(z.string(), z.number()),
});

export function serviceRoutes(ctx: ApiContext): AnyRouteSpec[] {
  const { store, clock } = ctx;
  return [
    defineRoute({
      method: 'GET',
      url: '/healthz',
      tag: 'service',
      summary: 'The process is up',
      role: null,
      responses: { 200: { description: 'alive', schema: z.object({ status: z.literal('ok'), time: z.string() }) } },
      handler: async () => ({ status: 'ok', time: clock().toISOString() }),
    }),
    defineRoute({
      method: 'GET',
      url: '/readyz',
      tag: 'service',
      summary: 'Database writable, migrations applied, last poll per source',
      role: null,
      responses: { 200: { description: 'ready', schema: readiness }, 503: { description: 'not ready', schema: readiness } },
      handler: async ({ reply }) => {
        const writable = isWritable(store.db);
        const migrations = migrationsCurrent(store.db, ctx.migrationsDir);
        const states = store.sources.all();
        const sources = ctx.sourceNames.map((name) => {
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
        return reply.status(ready ? 200 : 503).send({ status: ready ? 'ready' : 'not ready', database: { writable }, migrations, sources, work: store.work.counts() });
      },
    }),
    defineRoute({
      method: 'GET',
      url: '/metrics',
      tag: 'service',
      summary: 'Prometheus text-format metrics',
      role: null,
      produces: 'text/plain',
      responses: { 200: { description: 'exposition format 0.0.4', schema: z.string() } },
      handler: async ({ reply }) => reply.type('text/plain; version=0.0.4; charset=utf-8').send(ctx.metrics.registry.render()),
    }),
  ];
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

export function deliveryRoutes(ctx: ApiContext): AnyRouteSpec[] {
  return [
    defineRoute({
      method: 'GET',
      url: '/v1/deliveries',
      tag: 'review',
      summary: 'Webhook deliveries with every attempt, newest first',
      role: ['operator', 'reader'],
      readsOpenOnLoopback: true,
      query: z
        .object({
          cursor: z.coerce.number().int().positive().optional(),
          limit: z.coerce.number().int().min(1).max(500).default(50),
          hook: z.string().max(32).optional(),
          state: z.enum(['pending', 'delivered', 'failed']).optional(),
        })
        .strict(),
      responses: { 200: { description: 'a page', schema: z.object({ items: z.array(deliveryView), nextCursor: z.string().nullable() }) } },
      handler: async ({ query }) => {
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
    }),
  ];
}
