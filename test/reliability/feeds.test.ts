import { createServer, type Server } from 'node:http';
import { afterEach, describe, expect, it } from 'vitest';
import { buildApp } from '../../src/api/app.js';
import { MIGRATIONS_DIR } from '../../src/config/load.js';
import type { FeedConfig } from '../../src/config/schema.js';
import { FEED_MAX_BYTES, pollFeed } from '../../src/intake/feed.js';
import { createIntake } from '../../src/intake/ingest.js';
import { createServiceMetrics } from '../../src/telemetry/metrics.js';
import { intakeJobs } from '../../src/jobs/intake-jobs.js';
import { demoConfig, exampleNotice, memoryStore } from '../helpers.js';

const servers: Server[] = [];
const closers: (() => Promise<unknown>)[] = [];
afterEach(async () => {
  for (const s of servers.splice(0)) {
    s.closeAllConnections();
    await new Promise((r) => s.close(r));
  }
  for (const c of closers.splice(0)) await c();
});

/** A feed server on loopback; `answer` writes the response. Returns its URL. */
async function feedServer(answer: (res: import('node:http').ServerResponse) => void): Promise<string> {
  const server = createServer((_req, res) => answer(res));
  servers.push(server);
  await new Promise<void>((r) => server.listen(0, '127.0.0.1', r));
  const { port } = server.address() as { port: number };
  return `http://127.0.0.1:${port}/feed`;
}

function setup() {
  const now = { t: Date.parse('2027-03-04T06:00:00Z') };
  const clock = () => new Date(now.t);
  const store = memoryStore(clock);
  const intake = createIntake({ notices: store.notices, clock, futureToleranceMin: 5 });
  return { store, intake, clock, now };
}

const feed = (url: string): FeedConfig => ({ id: 'survey', url, schedule: '* * * * *', timeoutMs: 10_000, maxBackoffS: 600 });

describe('feeds read with limits', () => {
  it('stops reading an endless answer at the cap, on every retry', async () => {
    let sent = 0;
    let stopped = 0;
    const chunk = Buffer.alloc(64 * 1024, 0x20);
    const url = await feedServer((res) => {
      res.writeHead(200, { 'content-type': 'application/json' });
      const pump = () => {
        while (res.write(chunk)) {
          sent += chunk.length;
          if (sent > 64 * 1024 * 1024) {
            res.end();
            return;
          }
        }
        sent += chunk.length;
        res.once('drain', pump);
      };
      res.on('close', () => (stopped += 1));
      pump();
    });
    const { store, intake, clock, now } = setup();
    const cap = 1024 * 1024;
    const outcome = await pollFeed(feed(url), { intake, sources: store.sources, now: clock, maxBytes: cap });
    expect(outcome).toMatchObject({ status: 'failed', error: expect.stringContaining(`exceeds the ${cap}-byte limit; the read stopped at`) });
    await new Promise((r) => setTimeout(r, 200));
    expect(stopped).toBe(1);
    // What the server managed to send beyond the cap is what the socket buffers held, not the endless rest.
    expect(sent).toBeLessThan(cap + 16 * 1024 * 1024);
    now.t += 3600_000;
    const before = sent;
    await pollFeed(feed(url), { intake, sources: store.sources, now: clock, maxBytes: cap });
    expect(sent - before).toBeLessThan(cap + 16 * 1024 * 1024);
    expect(store.notices.counts().rejections).toBe(0);
    expect(FEED_MAX_BYTES).toBe(32 * 1024 * 1024);
  });

  it('refuses an answer whose stated length is over the cap without reading it', async () => {
    const url = await feedServer((res) => {
      res.writeHead(200, { 'content-type': 'application/json', 'content-length': String(2 * 1024 * 1024) });
      res.write('[');
    });
    const { store, intake, clock } = setup();
    const outcome = await pollFeed(feed(url), { intake, sources: store.sources, now: clock, maxBytes: 1024 * 1024 });
    expect(outcome).toMatchObject({ status: 'failed', error: `answer of ${2 * 1024 * 1024} bytes (content-length) exceeds the ${1024 * 1024}-byte limit; not read` });
  });

  it('counts an answer of garbage as a failed poll with backoff, keeps it, and shows the refused fraction', async () => {
    const garbage = Buffer.from(Array.from({ length: 4000 }, (_, k) => (k * 7919 + 13) % 256));
    const url = await feedServer((res) => {
      res.writeHead(200, { 'content-type': 'application/x-ndjson' });
      res.end(garbage);
    });
    const { store, intake, clock, now } = setup();
    const config = demoConfig((raw) => {
      (raw['service'] as Record<string, unknown>)['feeds'] = [{ id: 'survey', url, timeoutMs: 10_000, maxBackoffS: 600 }];
    });
    const metrics = createServiceMetrics();
    const app = await buildApp({ config, store, clock, metrics, intake, migrationsDir: MIGRATIONS_DIR });
    closers.push(() => app.close());
    const poll = intakeJobs({ config, store, intake, clock, log: { info: () => {}, warn: () => {} }, metrics }).find((j) => j.name === 'poll-survey')!;
    await poll.run();
    const state = store.sources.get('feed:survey')!;
    expect(state).toMatchObject({ consecutiveFailures: 1, lastError: expect.stringMatching(/^no valid notice in the answer: 1 refused \(first: \(body\): payload is not UTF-8/) });
    expect(Date.parse(state.nextAttemptAt!)).toBe(now.t + 15_000);
    // Within the backoff, the next tick does not ask.
    await poll.run();
    expect(store.sources.get('feed:survey')?.consecutiveFailures).toBe(1);
    expect(store.notices.counts().rejections).toBe(1);
    const ready = (await app.inject({ url: '/readyz' })).json();
    expect(ready.sources.find((s: { source: string }) => s.source === 'feed:survey')).toMatchObject({ rejectedFraction: 1, lastAnswer: { notices: 1, rejected: 1, rejectedFraction: 1 } });
    expect(ready.problems).toContain('feed:survey: 1 of 1 notices in its last answer were refused');
    const text = (await app.inject({ url: '/metrics' })).body;
    expect(text).toContain('nightjar_feed_poll_failures_total{feed="survey"} 1');
    expect(text).toContain('nightjar_source_rejected_fraction{source="feed:survey",over="all"} 1');
  });

  it('takes an empty answer as nothing new, not as a refusal', async () => {
    const url = await feedServer((res) => {
      res.writeHead(200, { 'content-type': 'application/json' });
      res.end('[]');
    });
    const { store, intake, clock } = setup();
    expect(await pollFeed(feed(url), { intake, sources: store.sources, now: clock })).toEqual({ status: 'fetched', accepted: 0, duplicate: 0, rejected: 0 });
    expect(store.notices.counts().rejections).toBe(0);
    expect(store.sources.get('feed:survey')?.consecutiveFailures).toBe(0);
  });

  it('reports the refused fraction of an answer with good and bad notices, as a success', async () => {
    const url = await feedServer((res) => {
      res.writeHead(200, { 'content-type': 'application/json' });
      res.end(JSON.stringify([exampleNotice(), { format: 'nope' }, exampleNotice({ noticeId: 'b', objectId: 'ZX27B01' }), 42]));
    });
    const { store, intake, clock } = setup();
    expect(await pollFeed(feed(url), { intake, sources: store.sources, now: clock })).toEqual({ status: 'fetched', accepted: 2, duplicate: 0, rejected: 2 });
    expect(store.sources.get('feed:survey')).toMatchObject({ consecutiveFailures: 0, noticesSeen: 4, noticesRejected: 2, lastPollNotices: 4, lastPollRejected: 2 });
  });
});
