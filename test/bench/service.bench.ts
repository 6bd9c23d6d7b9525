/**
 * Service benchmark (issue figures for docs/performance.md), printed, never asserted:
 *   1. assessment latency per notice (p50, p95, p99): 4-observation tracklets,
 *      1000 virtual orbits, both demo sites, planning included, in-process;
 *   2. a burst of N notices dropped into the inbox of a running service: time until
 *      all are assessed, and GET /v1/queue latency (autocannon) during the drain;
 *   3. GET /v1/queue throughput against a bare fastify route returning the same bytes;
 *   4. peak resident memory during the burst.
 *
 *   npx tsx test/bench/service.bench.ts [--latency N] [--burst N] [--members M]   (--burst 0: figure 1 only)
 */
import autocannon from 'autocannon';
import Fastify from 'fastify';
import { mkdirSync, renameSync, writeFileSync } from 'node:fs';
import { availableParallelism, cpus, tmpdir } from 'node:os';
import { mkdtempSync } from 'node:fs';
import { join } from 'node:path';
import { parseArgs } from 'node:util';
import pino from 'pino';
import { trackletOf } from '../../src/commands/notice-file.js';
import { loadConfig } from '../../src/config/load.js';
import { parseNotice } from '../../src/intake/notice.js';
import { runAssessTask } from '../../src/jobs/assess-worker.js';
import { simulateNight } from '../../src/planning/simulate.js';
import { startService } from '../../src/server.js';

const { values } = parseArgs({
  options: { latency: { type: 'string', default: '30' }, burst: { type: 'string', default: '200' }, members: { type: 'string', default: '1000' } },
});
const LATENCY_N = Number(values.latency);
const BURST_N = Number(values.burst);
const MEMBERS = Number(values.members);

const pct = (sorted: number[], p: number) => sorted[Math.min(sorted.length - 1, Math.floor((p / 100) * sorted.length))]!;
const ms = (x: number) => `${x.toFixed(0)} ms`;

/** `count` invented 4-observation notices (in batches of the simulator's 200), each its own object. */
function trackletNotices(now: Date, count: number, seed: number) {
  const out: Record<string, unknown>[] = [];
  for (let batch = 0; out.length < count; batch++) {
    for (const s of simulateNight({ now, count: Math.min(200, count - out.length), seed: seed + batch })) {
      const n = { ...s.notice } as Record<string, unknown>;
      n['observations'] = (n['observations'] as unknown[]).slice(0, 4);
      // Unique designations and notice ids across batches.
      n['objectId'] = `${String(n['objectId'])}${out.length}`;
      n['noticeId'] = `${String(n['noticeId'])}-${out.length}`;
      out.push(n);
    }
  }
  return out;
}

async function latency(): Promise<void> {
  const config = loadConfig({ env: {} });
  const now = new Date();
  // One more notice than timed: the first runs cold (module loading, JIT) and is reported apart,
  // as a worker's first assessment after a start is; the figures are for a warm worker.
  const notices = trackletNotices(now, LATENCY_N + 1, 7);
  const times: number[] = [];
  let coldMs = 0;
  for (const [index, n] of notices.entries()) {
    const parsed = parseNotice(n, { now, checkAge: false });
    if (!parsed.ok) throw new Error(`simulated notice refused: ${parsed.issues.map((i) => `${i.path}: ${i.message}`).join('; ')}`);
    const input = { objectId: parsed.notice.objectId, nowIso: now.toISOString(), orbit: null, observations: trackletOf(parsed.notice) };
    const t0 = performance.now();
    runAssessTask({ input, sites: config.sites, horizonH: config.planning.horizonH, members: MEMBERS, weights: {} });
    if (index === 0) coldMs = performance.now() - t0;
    else times.push(performance.now() - t0);
  }
  const sorted = [...times].sort((a, b) => a - b);
  console.log(`1. assessment latency, ${LATENCY_N} notices (4 observations, ${MEMBERS} virtual orbits, 2 sites, planning included), one thread:`);
  console.log(`   p50 ${ms(pct(sorted, 50))}, p95 ${ms(pct(sorted, 95))}, p99 ${ms(pct(sorted, 99))}, max ${ms(sorted.at(-1)!)}; first (cold) assessment, not in these: ${ms(coldMs)}`);
}

async function burstAndThroughput(): Promise<void> {
  const dir = mkdtempSync(join(tmpdir(), 'nightjar-bench-'));
  const base = loadConfig({ env: {} });
  const config = {
    ...base,
    service: {
      ...base.service,
      port: 0,
      logLevel: 'warn' as const,
      databasePath: join(dir, 'bench.sqlite'),
      inbox: { ...base.service.inbox, path: join(dir, 'inbox'), settleMs: 0, seedDemo: false, schedule: '* * * * * *' },
      rateLimitPerMinute: 10_000_000,
    },
    planning: { ...base.planning, members: MEMBERS },
    demo: { ...base.demo, simulate: false, dripMinutes: 0 },
  };
  const service = await startService({ config, logger: pino({ level: 'warn' }) });
  let peakRss = process.memoryUsage().rss;
  const sampler = setInterval(() => (peakRss = Math.max(peakRss, process.memoryUsage().rss)), 200);
  try {
    const now = new Date();
    const notices = trackletNotices(now, BURST_N, 11);
    mkdirSync(config.service.inbox.path, { recursive: true });
    // Drop the burst in files of 50 notices, renamed into place.
    for (let k = 0; k < notices.length; k += 50) {
      const tmp = join(config.service.inbox.path, `.b${k}.part`);
      writeFileSync(tmp, JSON.stringify(notices.slice(k, k + 50)));
      renameSync(tmp, join(config.service.inbox.path, `burst-${k}.json`));
    }
    const t0 = performance.now();
    const queueUrl = `${service.url}/v1/queue?site=lantern-ridge&limit=50`;
    // API latency while the burst drains.
    const during = await autocannon({ url: queueUrl, connections: 4, duration: 10 });
    let done = 0;
    for (;;) {
      const w = service.store.work.counts();
      done = w.done + w.failed;
      if (done >= BURST_N && w.waiting === 0 && w.running === 0) break;
      await new Promise((r) => setTimeout(r, 500));
    }
    const drainS = (performance.now() - t0) / 1000;
    console.log(`2. burst of ${BURST_N} notices into the inbox: all assessed in ${drainS.toFixed(1)} s (${service.assessment.pool.health().threads} worker thread(s); ${(drainS / BURST_N * 1000).toFixed(0)} ms per notice)`);
    console.log(`   GET /v1/queue during the drain (4 connections, 10 s): p50 ${during.latency.p50} ms, p99 ${during.latency.p99} ms, ${during.requests.average.toFixed(0)} req/s, errors ${during.errors}, non-2xx ${during.non2xx}`);

    // Throughput against a bare route returning the same bytes, in the same run.
    // The bare route sends the answer's bytes prebuilt (a Buffer: no encoding per request), the fastest way to return them.
    const body = Buffer.from(await (await fetch(queueUrl)).arrayBuffer());
    const bare = Fastify();
    bare.get('/bare', async (_req, reply) => reply.type('application/json; charset=utf-8').send(body));
    const bareUrl = `${await bare.listen({ host: '127.0.0.1', port: 0 })}/bare`;
    const ours = await autocannon({ url: queueUrl, connections: 10, duration: 8 });
    const theirs = await autocannon({ url: bareUrl, connections: 10, duration: 8 });
    await bare.close();
    console.log(
      `3. GET /v1/queue (${body.length} bytes, idle service) ${ours.requests.average.toFixed(0)} req/s vs bare route ${theirs.requests.average.toFixed(0)} req/s: ratio ${(ours.requests.average / theirs.requests.average).toFixed(2)}`,
    );
    console.log(`4. peak resident memory during the burst: ${(peakRss / 1024 / 1024).toFixed(0)} MiB`);
  } finally {
    clearInterval(sampler);
    await service.stop();
  }
}

console.log(`machine: ${availableParallelism()} cores (${cpus()[0]?.model ?? 'unknown'}), Node ${process.version}`);
await latency();
if (BURST_N > 0) await burstAndThroughput();
else console.log('2-4. skipped (--burst 0)');
