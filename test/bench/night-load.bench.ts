/**
 * A night under load (docs/performance.md, "A night under load"), printed, never asserted.
 *
 * The real service (startService: SQLite store on disk, the work queue, the assessment runner with
 * its worker pool, the API over HTTP) on a simulated clock, cron jobs off; the bench does what the
 * replan job and the senders would do:
 *   1. build: N invented objects (the demo simulator's ordinary objects and close approachers,
 *      4 positions each) are sent at once to POST /v1/notices and assessed (this is itself a burst
 *      of N: the time until every object has its first requests, and until every first look is
 *      refined, is printed);
 *   2. replan cycles every 10 simulated minutes (the replan job's enqueue and drain), as --plan
 *      lists them: `clean` alone (CPU per replanned object from the last of them, cycle time),
 *      `stream` with a random stream of new notices (a Poisson stream, --rate per minute) and
 *      GET /v1/queue under autocannon (4 connections, 10 s) from the cycle's start,
 *      `burst` with the stream and a burst of --burst notices at its start: ordinary objects with
 *      --burst-close close approachers in the middle of it; this cycle ends when every notice of the
 *      burst and of the stream so far has its first requests (the refinements of first looks and
 *      the replans still waiting are counted, not waited for), so it goes last in a plan;
 *   3. per new notice: from its POST to its first stored assessment ("notice to queued requests"),
 *      p50 / p99 / max for close approachers (the simulator's close-approacher and fast-flyby kinds)
 *      and for the others, by cycle kind, the burst's own notices apart;
 *   4. CPU (the whole process, every thread) per replanned object (the last clean cycle) and per new object
 *      (stream notices that arrive while nothing else runs, each measured alone), and the active
 *      objects one core sustains at 10-minute replans from those.
 * Time compression: within a cycle the simulated clock runs at the real rate; once the cycle's
 * work is done, the rest of its 10 minutes is skipped: the stream's later notices are sent one at a
 * time on an idle service, the clock set forward to each one's arrival.
 *
 *   npx tsx test/bench/night-load.bench.ts [--objects 100,500,2000] [--plan clean,stream,burst] [--rate 4] [--burst 500] [--burst-close 5] [--workers W]
 *   npx tsx test/bench/night-load.bench.ts --scale [--notices 40]   (worker scaling: 1 .. cores workers)
 */
import autocannon from 'autocannon';
import { createHash, randomBytes } from 'node:crypto';
import { mkdtempSync, rmSync } from 'node:fs';
import { availableParallelism, cpus, loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { parseArgs } from 'node:util';
import pino from 'pino';
import { loadConfig } from '../../src/config/load.js';
import type { Config } from '../../src/config/schema.js';
import { seededRandom, simulateNight, type SimulatedKind } from '../../src/planning/simulate.js';
import { startService, type RunningService } from '../../src/server.js';
import { quantile } from './quantile.js';

const { values } = parseArgs({
  options: {
    objects: { type: 'string', default: '100,500,2000' },
    plan: { type: 'string', default: 'clean,stream,burst' },
    rate: { type: 'string', default: '4' },
    burst: { type: 'string', default: '500' },
    'burst-close': { type: 'string', default: '5' },
    workers: { type: 'string' },
    scale: { type: 'boolean', default: false },
    notices: { type: 'string', default: '40' },
    seed: { type: 'string', default: '1' },
  },
});
const CYCLE_MS = 10 * 60_000;
const T0 = Date.parse('2027-03-04T02:00:00Z');
const TOKEN = randomBytes(16).toString('hex');

const load = () => `load ${loadavg().map((x) => x.toFixed(2)).join(' ')}`;
const stamp = () => `${new Date().toISOString().slice(0, 19)}Z, ${load()}`;
const f0 = (x: number) => (Number.isFinite(x) ? x.toFixed(0) : '-');
const f2 = (x: number) => (Number.isFinite(x) ? x.toFixed(2) : '-');
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));
const cpuS = (since: NodeJS.CpuUsage) => {
  const d = process.cpuUsage(since);
  return (d.user + d.system) / 1e6;
};
const URGENT_KINDS: readonly SimulatedKind[] = ['close-approacher', 'fast-flyby'];

/** A simulated clock: runs at the real rate from where it was last set; only moves forward. */
function simClock(startMs: number) {
  let baseSim = startMs;
  let baseReal = performance.now();
  const nowMs = () => baseSim + (performance.now() - baseReal);
  return {
    clock: () => new Date(nowMs()),
    nowMs,
    setForward(ms: number) {
      if (ms > nowMs()) {
        baseSim = ms;
        baseReal = performance.now();
      }
    },
  };
}

interface Sent {
  objectId: string;
  kind: SimulatedKind;
  notice: Record<string, unknown>;
}

/** Invented notices at `nowMs` (4 positions each, designations made unique by a serial); `kinds` filters the simulator's mix. */
function inventNotices(nowMs: number, count: number, seed: number, serial: { next: number }, kinds?: readonly SimulatedKind[]): Sent[] {
  const out: Sent[] = [];
  for (let batch = 0; out.length < count; batch++) {
    for (const s of simulateNight({ now: new Date(nowMs), count: 196, seed: seed * 1000 + batch })) {
      if (out.length >= count) break;
      if (kinds && !kinds.includes(s.kind)) continue;
      const k = serial.next++;
      const notice = { ...s.notice, objectId: `${String(s.notice['objectId'])}${k}`, noticeId: `${String(s.notice['noticeId'])}-${k}` } as Record<string, unknown>;
      notice['observations'] = (notice['observations'] as unknown[]).slice(0, 4);
      out.push({ objectId: notice['objectId'] as string, kind: s.kind, notice });
    }
  }
  return out;
}

/** The service under test with the bench's token, clock and log sink; every 'object assessed' line is an event. */
async function startBenchService(workers: number | undefined, sim: ReturnType<typeof simClock>, firstLookBacklog?: number) {
  const dir = mkdtempSync(join(tmpdir(), 'nightjar-night-'));
  const base = loadConfig({ env: {} });
  const config: Config = {
    ...base,
    service: {
      ...base.service,
      port: 0,
      logLevel: 'info',
      databasePath: join(dir, 'night.sqlite'),
      inbox: { ...base.service.inbox, path: join(dir, 'inbox'), seedDemo: false },
      rateLimitPerMinute: 1_000_000,
      tokens: [...base.service.tokens, { name: 'bench-feeder', sha256: createHash('sha256').update(TOKEN).digest('hex'), roles: ['feeder'] }],
      ...(workers !== undefined ? { workers } : {}),
    },
    planning: { ...base.planning, ...(firstLookBacklog !== undefined ? { firstLookBacklog } : {}) },
    demo: { ...base.demo, simulate: false, dripMinutes: 0 },
  };
  const assessed = new Map<string, { atMs: number; firstLook: boolean; queued: number }[]>();
  const listeners = new Set<() => void>();
  const sink = {
    write(line: string) {
      if (!line.includes('"object assessed"')) return;
      const o = JSON.parse(line) as { objectId: string; firstLook?: boolean; queued: number };
      const list = assessed.get(o.objectId) ?? [];
      list.push({ atMs: performance.now(), firstLook: o.firstLook === true, queued: o.queued });
      assessed.set(o.objectId, list);
      for (const l of listeners) l();
    },
  };
  const service = await startService({ config, clock: sim.clock, schedule: false, logger: pino({ level: 'info' }, sink) });
  const post = async (notices: Record<string, unknown>[]) => {
    const res = await fetch(`${service.url}/v1/notices`, {
      method: 'POST',
      headers: { authorization: `Bearer ${TOKEN}`, 'content-type': 'application/json' },
      body: JSON.stringify(notices),
    });
    const answer = (await res.json()) as { accepted: number; rejected: number; results: { status: string; reasons?: unknown }[] };
    if (answer.rejected > 0) throw new Error(`notices refused: ${JSON.stringify(answer.results.find((r) => r.status === 'rejected'))}`);
    return answer;
  };
  /** Resolves when `done()` holds (checked at each assessment, and every 50 ms unless `poll` is false). */
  const until = (done: () => boolean, poll = true) =>
    new Promise<void>((resolve) => {
      const check = () => {
        if (!done()) return;
        listeners.delete(check);
        if (timer) clearInterval(timer);
        resolve();
      };
      const timer = poll ? setInterval(check, 50) : null;
      listeners.add(check);
      check();
    });
  const idle = () => {
    const c = service.store.work.counts();
    return c.waiting === 0 && c.running === 0;
  };
  const replansDone = () => {
    const f = service.store.work.classFigures(sim.clock());
    return f.urgent.waiting + f.urgent.running + f.routine.waiting + f.routine.running === 0;
  };
  const close = async () => {
    await service.stop();
    rmSync(dir, { recursive: true, force: true });
  };
  return { service, config, assessed, post, until, idle, replansDone, close };
}
type BenchService = Awaited<ReturnType<typeof startBenchService>>;

/** GET /v1/queue under autocannon (4 connections) for `seconds`. */
function hammer(service: RunningService, config: Config, seconds: number) {
  return autocannon({ url: `${service.url}/v1/queue?site=${config.sites[0]!.id}&limit=50`, connections: 4, duration: seconds });
}

const stats = (xs: number[]) => {
  const s = [...xs].sort((a, b) => a - b);
  return { n: s.length, p50: quantile(s, 0.5), p99: quantile(s, 0.99), max: s.at(-1) ?? Number.NaN };
};
const line = (label: string, xs: number[], unit = 'ms') => {
  const s = stats(xs);
  return `${label}: n ${s.n}, p50 ${f0(s.p50)} ${unit}, p99 ${f0(s.p99)} ${unit}, max ${f0(s.max)} ${unit}`;
};

async function night(n: number): Promise<void> {
  const workers = values.workers !== undefined ? Number(values.workers) : undefined;
  const sim = simClock(T0);
  const b: BenchService = await startBenchService(workers, sim);
  const serial = { next: 0 };
  const seed = Number(values.seed);
  const plan = values.plan.split(',') as ('clean' | 'stream' | 'burst')[];
  if (plan.some((k) => !['clean', 'stream', 'burst'].includes(k))) throw new Error(`--plan: expected cycles among clean, stream, burst; got ${values.plan}`);
  const cycles = plan.length;
  const threads = workers ?? b.config.service.workers ?? Math.max(1, availableParallelism() - 1);
  console.log(`\n== ${n} active objects, ${threads} assessment worker(s), first look at ${b.config.planning.firstLookBacklog} waiting; ${stamp()}`);
  try {
    // 1. The active set, sent at once (a burst of n).
    const build = inventNotices(T0, n, seed, serial, ['ordinary', 'close-approacher']);
    const cpu0 = process.cpuUsage();
    const t0 = performance.now();
    for (let k = 0; k < build.length; k += 250) await b.post(build.slice(k, k + 250).map((s) => s.notice));
    await b.until(() => build.every((s) => b.assessed.has(s.objectId)));
    const firstS = (performance.now() - t0) / 1000;
    await b.until(b.idle);
    const allS = (performance.now() - t0) / 1000;
    const looks = build.filter((s) => b.assessed.get(s.objectId)![0]!.firstLook).length;
    const active = () => (b.service.store.db.prepare(`SELECT count(*) AS n FROM objects WHERE state = 'active'`).get() as { n: number }).n;
    console.log(
      `build (a burst of ${n}): every object assessed in ${firstS.toFixed(1)} s (${looks} by a first look), every first look refined at ${allS.toFixed(1)} s; CPU ${cpuS(cpu0).toFixed(0)} s; ${active()} active; ${stamp()}`,
    );

    // The stream and the burst, invented before the cycles (their cost stays out of the figures).
    const random = seededRandom(seed + 7);
    const start = Math.ceil(sim.nowMs() / CYCLE_MS) * CYCLE_MS;
    const rate = Number(values.rate) / 60_000;
    const streams: { offsetMs: number; sent: Sent }[][] = [];
    for (let c = 1; c <= cycles; c++) {
      const at: number[] = [];
      if (plan[c - 1] !== 'clean') for (let t = -Math.log(1 - random()) / rate; t < CYCLE_MS; t += -Math.log(1 - random()) / rate) at.push(t);
      const sent = inventNotices(start + (c - 1) * CYCLE_MS, at.length, seed + 100 + c, serial);
      // The simulator's kinds come in a fixed order: shuffle them over the arrivals.
      for (let i = sent.length - 1; i > 0; i--) {
        const j = Math.floor(random() * (i + 1));
        [sent[i], sent[j]] = [sent[j]!, sent[i]!];
      }
      streams.push(at.map((offsetMs, i) => ({ offsetMs, sent: sent[i]! })));
    }
    const burstN = Number(values.burst);
    const burstCycle = plan.indexOf('burst') + 1;
    const burstClose = Math.min(burstN, Number(values['burst-close']));
    const burst: Sent[] = [];
    if (burstCycle > 0 && burstN > 0) {
      const at = start + (burstCycle - 1) * CYCLE_MS;
      burst.push(...inventNotices(at, burstN - burstClose, seed + 200, serial, ['ordinary', 'too-faint', 'too-far-south']));
      // The close approachers in the middle of the burst, a few notices apart.
      const close = inventNotices(at, burstClose, seed + 250, serial, URGENT_KINDS);
      close.forEach((s, i) => burst.splice(Math.floor(burst.length / 2) + i * 3, 0, s));
    }

    type Kinds = { urgent: number[]; other: number[] };
    const latency: Record<'stream' | 'burst' | 'burstItself', Kinds> = {
      stream: { urgent: [], other: [] },
      burst: { urgent: [], other: [] },
      burstItself: { urgent: [], other: [] },
    };
    const into = (kinds: Kinds, s: Sent) => (URGENT_KINDS.includes(s.kind) ? kinds.urgent : kinds.other);
    const cpuNew: number[] = [];
    let cpuPerReplan = Number.NaN;
    for (let c = 1; c <= cycles; c++) {
      sim.setForward(start + (c - 1) * CYCLE_MS);
      const cycleStartSim = sim.nowMs();
      const stream = streams[c - 1]!;
      const cpuC = process.cpuUsage();
      const t0c = performance.now();
      const replanned = b.service.assessment.runner.enqueueActive();
      void b.service.assessment.runner.drain();
      const cannon = plan[c - 1] === 'stream' ? hammer(b.service, b.config, 10) : null;
      const waits: Promise<void>[] = [];
      const seen = (s: Sent) => b.assessed.get(s.objectId)?.length ?? 0;
      /** Waits for the assessment after the `before`-th of a notice sent at `sentAt` (counted before it was sent). */
      let pending = 0;
      const track = (s: Sent, sentAt: number, list: number[], before: number) => {
        pending += 1;
        waits.push(
          b.until(() => (b.assessed.get(s.objectId)?.length ?? 0) > before, false).then(() => {
            pending -= 1;
            list.push(b.assessed.get(s.objectId)![before]!.atMs - sentAt);
          }),
        );
      };
      const kind = plan[c - 1]!;
      const streamLatency = kind === 'burst' ? latency.burst : latency.stream;
      let left = '';
      let burstS = Number.NaN;
      if (c === burstCycle && burst.length > 0) {
        const before = burst.map(seen);
        const sentAt = performance.now();
        await b.post(burst.map((s) => s.notice));
        burst.forEach((s, i) => track(s, sentAt, into(latency.burstItself, s), before[i]!));
        void Promise.all(waits.slice()).then(() => (burstS = (performance.now() - sentAt) / 1000));
      }
      // The stream in real time while the cycle's work runs.
      let next = 0;
      let replanS = Number.NaN;
      for (;;) {
        const elapsed = performance.now() - t0c;
        while (next < stream.length && stream[next]!.offsetMs <= elapsed) {
          const s = stream[next++]!.sent;
          const before = seen(s);
          const sentAt = performance.now();
          await b.post([s.notice]);
          track(s, sentAt, into(streamLatency, s), before);
        }
        if (Number.isNaN(replanS) && b.replansDone()) replanS = (performance.now() - t0c) / 1000;
        if (!Number.isNaN(replanS) && b.idle()) break;
        if (kind === 'burst' && Number.isFinite(burstS) && pending === 0) {
          const f = b.service.store.work.classFigures(sim.clock());
          left = `; then waiting: ${f['new-data'].waiting} new data, ${f.urgent.waiting + f.routine.waiting} replans and refinements`;
          break;
        }
        await sleep(20);
      }
      const busyS = (performance.now() - t0c) / 1000;
      const cpuBusy = cpuS(cpuC);
      const during = next;
      // The rest of the 10 minutes, compressed: each later notice on an idle service (none after a burst).
      for (; kind !== 'burst' && next < stream.length; next++) {
        const { offsetMs, sent: s } = stream[next]!;
        sim.setForward(cycleStartSim + offsetMs);
        const before = seen(s);
        const cpuN = process.cpuUsage();
        const sentAt = performance.now();
        await b.post([s.notice]);
        track(s, sentAt, into(streamLatency, s), before);
        await waits.at(-1);
        await b.until(b.idle);
        cpuNew.push(cpuS(cpuN));
      }
      await Promise.all(waits);
      const api = cannon ? await cannon : null;
      if (plan[c - 1] === 'clean') cpuPerReplan = cpuBusy / replanned;
      console.log(
        `cycle ${c}, ${plan[c - 1]} (${replanned} replans${stream.length ? `, stream of ${stream.length}: ${during} during the work, ${stream.length - during} ${kind === 'burst' ? 'not sent' : 'after'}` : ''}${c === burstCycle && burst.length ? `, burst of ${burst.length}` : ''}): ` +
          `replans done in ${replanS.toFixed(1)} s, all work in ${busyS.toFixed(1)} s, CPU ${cpuBusy.toFixed(1)} s (${f0((cpuBusy / replanned) * 1000)} ms per replan${plan[c - 1] !== 'clean' ? ', new notices included' : ''})` +
          `${Number.isFinite(burstS) ? `; burst: every notice assessed in ${burstS.toFixed(1)} s${left}` : ''}; ${stamp()}`,
      );
      if (api)
        console.log(`  GET /v1/queue meanwhile (autocannon, 4 connections, 10 s): p50 ${api.latency.p50} ms, p99 ${api.latency.p99} ms, ${f0(api.requests.average)} req/s, errors ${api.errors}, non-2xx ${api.non2xx}`);
    }
    console.log(`notice to queued requests (POST to the first stored assessment), stream of ${Number(values.rate)}/min (cycles ${plan.join(', ')}):`);
    console.log(`  ${line('stream, close approachers', latency.stream.urgent)}`);
    console.log(`  ${line('stream, others', latency.stream.other)}`);
    if (burst.length) {
      console.log(`  ${line(`burst of ${burst.length}: its close approachers (in the middle)`, latency.burstItself.urgent)}`);
      console.log(`  ${line(`burst of ${burst.length}: its others`, latency.burstItself.other)}`);
      console.log(`  ${line('stream during the burst, close approachers', latency.burst.urgent)}`);
      console.log(`  ${line('stream during the burst, others', latency.burst.other)}`);
    }
    const newCpu = stats(cpuNew);
    console.log(
      `CPU per replanned object (the last clean cycle, whole process): ${f0(cpuPerReplan * 1000)} ms; per new object (stream notices alone on an idle service): p50 ${f0(newCpu.p50 * 1000)} ms, mean ${f0((cpuNew.reduce((a, x) => a + x, 0) / Math.max(1, cpuNew.length)) * 1000)} ms (n ${newCpu.n})`,
    );
    const meanNew = cpuNew.reduce((a, x) => a + x, 0) / Math.max(1, cpuNew.length);
    console.log(
      `one core sustains at 10-minute replans: ${f0(600 / cpuPerReplan)} active objects (replans alone), ${f0((600 - Number(values.rate) * 10 * meanNew) / cpuPerReplan)} beside a stream of ${Number(values.rate)}/min; ${stamp()}`,
    );
  } finally {
    await b.close();
  }
}

/** Worker scaling: new notices and replans per second, and the API's p99 meanwhile, for 1 .. cores workers. */
async function scale(): Promise<void> {
  const count = Number(values.notices);
  for (let w = 1; w <= availableParallelism(); w++) {
    const sim = simClock(T0);
    // Full assessments only (no first look), so both runs do the same work.
    const b = await startBenchService(w, sim, 0);
    try {
      const idleApi = await hammer(b.service, b.config, 5);
      const sent = inventNotices(T0, count, Number(values.seed) + 300, { next: 0 }, ['ordinary', 'close-approacher']);
      // A warm-up notice per worker (module loading, JIT), not counted.
      const warm = inventNotices(T0, w, Number(values.seed) + 400, { next: 10_000 });
      await b.post(warm.map((s) => s.notice));
      await b.until(b.idle);
      const cpu0 = process.cpuUsage();
      const t0 = performance.now();
      await b.post(sent.map((s) => s.notice));
      const api = hammer(b.service, b.config, 5);
      await b.until(b.idle);
      const newS = (performance.now() - t0) / 1000;
      const newCpu = cpuS(cpu0);
      const during = await api;
      // Two replan rounds: the first spreads each object's kept work over the workers.
      sim.setForward(T0 + CYCLE_MS);
      b.service.assessment.runner.enqueueActive();
      await b.service.assessment.runner.drain();
      await b.until(b.idle);
      sim.setForward(T0 + 2 * CYCLE_MS);
      const t1 = performance.now();
      const replans = b.service.assessment.runner.enqueueActive();
      const api2 = hammer(b.service, b.config, 3);
      await b.service.assessment.runner.drain();
      await b.until(b.idle);
      const replanS = (performance.now() - t1) / 1000;
      const during2 = await api2;
      console.log(
        `${w} worker(s): ${count} new notices in ${newS.toFixed(1)} s = ${f2(count / newS)} assessments/s (CPU ${newCpu.toFixed(1)} s); ${replans} replans in ${replanS.toFixed(1)} s = ${f2(replans / replanS)} replans/s; ` +
          `GET /v1/queue p99 idle ${idleApi.latency.p99} ms, during the new notices ${during.latency.p99} ms (${f0(during.requests.average)} req/s), during the replans ${during2.latency.p99} ms; ${stamp()}`,
      );
    } finally {
      await b.close();
    }
  }
}

console.log(`night-load bench: ${availableParallelism()} cores (${cpus()[0]?.model ?? 'unknown'}), Node ${process.version}; ${stamp()}`);
if (values.scale) await scale();
else for (const n of values.objects.split(',').map(Number)) await night(n);
console.log(`finished ${stamp()}`);
