import { connect } from 'node:net';
import Fastify from 'fastify';
import { afterEach, describe, expect, it } from 'vitest';
import { buildApp } from '../../src/api/app.js';
import { MIGRATIONS_DIR } from '../../src/config/load.js';
import { createIntake } from '../../src/intake/ingest.js';
import { intakeJobs } from '../../src/jobs/intake-jobs.js';
import { createServiceMetrics } from '../../src/telemetry/metrics.js';
import { DEMO_TOKENS, demoConfig, exampleNotice, memoryStore } from '../helpers.js';

const closers: (() => Promise<unknown>)[] = [];
afterEach(async () => {
  for (const c of closers.splice(0)) await c();
});

async function feedServer(handler: (n: number) => { status: number; body: string }): Promise<string> {
  const server = Fastify();
  let n = 0;
  server.get('/feed', async (_req, reply) => {
    const r = handler(n++);
    return reply.status(r.status).type('application/json').send(r.body);
  });
  closers.push(() => server.close());
  return `${await server.listen({ host: '127.0.0.1', port: 0 })}/feed`;
}

/** The service with one feed; `timeoutMs` short only where a test waits for the timeout (a loaded machine answers a local 500 slowly). */
async function serviceWithFeed(url: string, timeoutMs = 300) {
  const now = { t: Date.parse('2027-03-04T06:00:00Z') };
  const clock = () => new Date(now.t);
  const config = demoConfig((raw) => {
    (raw['service'] as Record<string, unknown>)['feeds'] = [{ id: 'survey', url, timeoutMs, maxBackoffS: 600 }];
  });
  const store = memoryStore(clock);
  const metrics = createServiceMetrics();
  const intake = createIntake({ notices: store.notices, clock, futureToleranceMin: 5 });
  const app = await buildApp({ config, store, clock, metrics, intake, migrationsDir: MIGRATIONS_DIR });
  closers.push(() => app.close());
  const log = { info: () => {}, warn: () => {} };
  const poll = intakeJobs({ config, store, intake, clock, log, metrics }).find((j) => j.name === 'poll-survey')!;
  return { app, store, poll, now };
}

describe('feed faults', () => {
  it('shows a failing feed backing off in /readyz and /metrics, and keeps answering', async () => {
    const url = await feedServer(() => ({ status: 500, body: '{"oops":1}' }));
    const { app, poll } = await serviceWithFeed(url, 5000);
    await poll.run();
    const ready = (await app.inject({ url: '/readyz' })).json();
    const feed = ready.sources.find((s: { source: string }) => s.source === 'feed:survey');
    expect(feed).toMatchObject({ consecutiveFailures: 1, lastError: 'HTTP 500 Internal Server Error' });
    expect(feed.nextAttemptAt).not.toBeNull();
    const metrics = (await app.inject({ url: '/metrics' })).body;
    expect(metrics).toContain('nightjar_feed_poll_failures_total{feed="survey"} 1');
    expect(metrics).toContain('nightjar_source_consecutive_failures{source="feed:survey"} 1');
    expect((await app.inject({ url: '/healthz' })).statusCode).toBe(200);
  });

  it('makes no duplicate work from a feed that repeats the same notices forever', async () => {
    const body = JSON.stringify([exampleNotice(), exampleNotice({ noticeId: 'ex-0002', objectId: 'ZX27A02' })]);
    const url = await feedServer(() => ({ status: 200, body }));
    const { store, poll } = await serviceWithFeed(url);
    for (let k = 0; k < 5; k++) await poll.run();
    expect(store.notices.counts()).toMatchObject({ notices: 2, observations: 4 });
    expect(store.work.counts().waiting).toBe(2);
  });

  it('survives a feed that sends garbage or hangs, and records each failure', async () => {
    const url = await feedServer((n) => (n === 0 ? { status: 200, body: '\u0000\u0001 not json' } : { status: 200, body: '[]' }));
    const { store, poll } = await serviceWithFeed(url);
    await poll.run();
    expect(store.notices.counts().rejections).toBe(1);
    const hang = Fastify({ forceCloseConnections: true });
    hang.get('/feed', async () => new Promise(() => {}));
    const hangUrl = `${await hang.listen({ host: '127.0.0.1', port: 0 })}/feed`;
    closers.push(() => hang.close());
    const second = await serviceWithFeed(hangUrl, 300);
    await second.poll.run();
    expect(second.store.sources.get('feed:survey')?.lastError).toBe('timed out after 300 ms');
  });
});

describe('API under load', () => {
  it('answers other callers while a slow client trickles its body', async () => {
    const store = memoryStore();
    const app = await buildApp({ config: demoConfig(), store, clock: () => new Date(), migrationsDir: MIGRATIONS_DIR });
    closers.push(() => app.close());
    const address = await app.listen({ host: '127.0.0.1', port: 0 });
    const port = Number(new URL(address).port);
    const slow = connect(port, '127.0.0.1');
    await new Promise<void>((r) => slow.once('connect', () => r()));
    slow.write(
      `POST /v1/notices HTTP/1.1\r\nHost: x\r\nAuthorization: Bearer ${DEMO_TOKENS.feeder}\r\nContent-Type: application/json\r\nContent-Length: 100000\r\n\r\n{"format":`,
    );
    const answers = await Promise.all(Array.from({ length: 20 }, () => fetch(`${address}/healthz`).then((r) => r.status)));
    expect(answers.every((s) => s === 200)).toBe(true);
    // The slow request is still open: it had no effect on the others.
    expect(slow.destroyed).toBe(false);
    slow.destroy();
  });
});
