import Fastify, { type FastifyInstance, type RouteHandlerMethod } from 'fastify';
import { afterEach, describe, expect, it } from 'vitest';
import type { FeedConfig } from '../../src/config/schema.js';
import { backoffSeconds, pollFeed } from '../../src/intake/feed.js';
import { createIntake } from '../../src/intake/ingest.js';
import { exampleNotice, memoryStore } from '../helpers.js';

let server: FastifyInstance | null = null;
afterEach(async () => {
  await server?.close();
  server = null;
});

async function serveFeed(handler: RouteHandlerMethod): Promise<string> {
  server = Fastify();
  server.get('/feed', handler);
  return `${await server.listen({ host: '127.0.0.1', port: 0 })}/feed`;
}

function setup(now = { t: Date.parse('2027-03-04T06:00:00Z') }) {
  const clock = () => new Date(now.t);
  const store = memoryStore(clock);
  const intake = createIntake({ notices: store.notices, clock, futureToleranceMin: 5 });
  return { store, deps: { intake, sources: store.sources, now: clock }, now };
}

const feed = (url: string, extra: Partial<FeedConfig> = {}): FeedConfig => ({
  id: 'test-feed',
  url,
  schedule: '* * * * *',
  timeoutMs: 500,
  maxBackoffS: 600,
  ...extra,
});

describe('feed polling', () => {
  it('stores the notices of a JSON array, then sends the ETag and gets 304', async () => {
    const seen: (string | undefined)[] = [];
    const url = await serveFeed(async (request, reply) => {
      seen.push(request.headers['if-none-match']);
      if (request.headers['if-none-match'] === '"v1"') return reply.status(304).send();
      return reply.header('etag', '"v1"').send([exampleNotice(), exampleNotice({ noticeId: 'ex-0002' })]);
    });
    const { store, deps } = setup();
    expect(await pollFeed(feed(url), deps)).toEqual({ status: 'fetched', accepted: 2, duplicate: 0, rejected: 0 });
    expect(await pollFeed(feed(url), deps)).toEqual({ status: 'not-modified' });
    expect(seen).toEqual([undefined, '"v1"']);
    expect(store.notices.counts().notices).toBe(2);
  });

  it('skips notices it already has when a feed repeats itself', async () => {
    const url = await serveFeed(async () => [exampleNotice()]);
    const { store, deps } = setup();
    await pollFeed(feed(url), deps);
    expect(await pollFeed(feed(url), deps)).toMatchObject({ status: 'fetched', accepted: 0, duplicate: 1 });
    expect(store.notices.counts().notices).toBe(1);
  });

  it('reads NDJSON', async () => {
    const url = await serveFeed(async (_req, reply) =>
      reply.type('application/x-ndjson').send(`${JSON.stringify(exampleNotice())}\n${JSON.stringify(exampleNotice({ noticeId: 'b' }))}\n`),
    );
    const { deps } = setup();
    expect(await pollFeed(feed(url), deps)).toMatchObject({ status: 'fetched', accepted: 2 });
  });

  it('backs off after a failure and records it for the readiness report', async () => {
    const url = await serveFeed(async (_req, reply) => reply.status(500).send({ oops: true }));
    const { store, deps, now } = setup();
    const first = await pollFeed(feed(url), deps);
    expect(first).toMatchObject({ status: 'failed', error: 'HTTP 500 Internal Server Error', consecutiveFailures: 1 });
    expect(await pollFeed(feed(url), deps)).toMatchObject({ status: 'skipped' });
    now.t += 16_000;
    expect(await pollFeed(feed(url), deps)).toMatchObject({ status: 'failed', consecutiveFailures: 2 });
    expect(store.sources.get('feed:test-feed')).toMatchObject({ consecutiveFailures: 2, lastError: 'HTTP 500 Internal Server Error' });
  });

  it('gives up on a feed that hangs past its timeout', async () => {
    const url = await serveFeed(async () => new Promise((resolve) => setTimeout(() => resolve([]), 3000)));
    const { deps } = setup();
    expect(await pollFeed(feed(url, { timeoutMs: 200 }), deps)).toMatchObject({ status: 'failed', error: 'timed out after 200 ms' });
  });

  it('keeps garbage from a feed as a rejection and counts the poll as failed', async () => {
    const url = await serveFeed(async (_req, reply) => reply.type('application/json').send('<html>oops'));
    const { store, deps } = setup();
    expect(await pollFeed(feed(url), deps)).toMatchObject({ status: 'failed', consecutiveFailures: 1 });
    expect(store.notices.counts().rejections).toBe(1);
  });

  it('recovers after a failure and resets the backoff', async () => {
    let fail = true;
    const url = await serveFeed(async (_req, reply) => (fail ? reply.status(503).send() : reply.send([exampleNotice()])));
    const { store, deps, now } = setup();
    await pollFeed(feed(url), deps);
    fail = false;
    now.t += 60_000;
    expect(await pollFeed(feed(url), deps)).toMatchObject({ status: 'fetched', accepted: 1 });
    expect(store.sources.get('feed:test-feed')?.consecutiveFailures).toBe(0);
  });

  it('doubles the wait after each failure up to the cap', () => {
    expect([1, 2, 3, 4, 10].map((n) => backoffSeconds(n, 100))).toEqual([15, 30, 60, 100, 100]);
  });
});
