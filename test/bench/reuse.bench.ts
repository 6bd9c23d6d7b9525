/**
 * Reuse of unchanged work (docs/performance.md, "Replans of unchanged objects"), printed, never asserted.
 * For N simulated 4-position notices (1000 virtual orbits, both demo sites, 36 h), one thread:
 *   - a full assessment (estimate and plans), as for a new notice;
 *   - a replan 10 minutes later with the work kept in memory (the worker's cache);
 *   - a replan 13 hours later (a new 12-hour piece of the track at the end, old ones dropped);
 *   - a replan with only the stored estimate (as after a restart: the track is propagated again);
 *   - a full recomputation of the same replan, and whether it gives the same answer;
 *   - memory per kept object (heap and array buffers, after garbage collection) and the cache's own estimate;
 *   - the size of a stored estimate.
 *
 *   node --expose-gc --import tsx test/bench/reuse.bench.ts [--count N] [--members M]
 */
import { cpus, loadavg } from 'node:os';
import { parseArgs } from 'node:util';
import { trackletOf } from '../../src/commands/notice-file.js';
import { loadConfig } from '../../src/config/load.js';
import { parseNotice } from '../../src/intake/notice.js';
import { storedCoreBytes } from '../../src/orbit/estimation/index.js';
import { assessObject, type AssessmentInput } from '../../src/planning/assess.js';
import { createSkyTimelineCache, createTrackCache } from '../../src/planning/reuse.js';
import { simulateNight } from '../../src/planning/simulate.js';
import { quantile } from './quantile.js';

const { values } = parseArgs({ options: { count: { type: 'string', default: '30' }, members: { type: 'string', default: '1000' } } });
const COUNT = Number(values.count);
const MEMBERS = Number(values.members);
const config = loadConfig({ env: {} });
const NOW = new Date();
const gc = (globalThis as { gc?: () => void }).gc;

const inputs: Omit<AssessmentInput, 'now'>[] = simulateNight({ now: NOW, count: COUNT + 1, seed: 41 }).map((s) => {
  const parsed = parseNotice({ ...s.notice, observations: (s.notice['observations'] as unknown[]).slice(0, 4) }, { now: NOW, checkAge: false });
  if (!parsed.ok) throw new Error('simulated notice refused');
  return { objectId: parsed.notice.objectId, observations: trackletOf(parsed.notice), orbit: null, sites: config.sites, horizonH: config.planning.horizonH, members: MEMBERS };
});

const answer = (a: ReturnType<typeof assessObject>) => JSON.stringify([a.summary, a.requests, a.usable, a.retireReason]);
const timed = <T>(f: () => T): [T, number] => {
  const t0 = performance.now();
  const out = f();
  return [out, performance.now() - t0];
};

console.log(`reuse bench: ${COUNT} notices, ${MEMBERS} virtual orbits, ${config.sites.length} sites, ${config.planning.horizonH} h; ${new Date().toISOString()}, load ${loadavg().map((x) => x.toFixed(2)).join(' ')}, ${cpus().length} cores`);
// Warm up (module loading, JIT) on the extra notice.
assessObject({ ...inputs[0]!, now: NOW });
const reuse = { tracks: createTrackCache({ maxBytes: 8 * 1024 ** 3 }), timelines: createSkyTimelineCache() };
const heap = () => (gc?.(), process.memoryUsage().heapUsed + process.memoryUsage().arrayBuffers);
const before = heap();
const full: number[] = [], replan: number[] = [], extend: number[] = [], restart: number[] = [], cold: number[] = [];
let equal = 0;
let storedBytes = 0;
const kept: { key: string; core: ReturnType<typeof assessObject>['estimate']['core'] }[] = [];
for (const input of inputs.slice(1)) {
  const [first, tFull] = timed(() => assessObject({ ...input, now: NOW, reuse }));
  full.push(tFull);
  kept.push({ key: first.estimate.key, core: first.estimate.core });
  storedBytes += storedCoreBytes(first.estimate.core).length;
  const later = new Date(NOW.getTime() + 10 * 60_000);
  const [again, tReplan] = timed(() => assessObject({ ...input, now: later, reuse }));
  replan.push(tReplan);
  const [fresh, tCold] = timed(() => assessObject({ ...input, now: later }));
  cold.push(tCold);
  if (answer(again) === answer(fresh)) equal += 1;
  const [, tRestart] = timed(() => assessObject({ ...input, now: later, keptEstimate: kept.at(-1)! }));
  restart.push(tRestart);
}
const after = heap();
for (const input of inputs.slice(1)) extend.push(timed(() => assessObject({ ...input, now: new Date(NOW.getTime() + 13 * 3_600_000), reuse }))[1]);

const row = (name: string, xs: number[]) => {
  const s = [...xs].sort((a, b) => a - b);
  const mean = xs.reduce((a, b) => a + b, 0) / xs.length;
  console.log(`  ${name.padEnd(58)} p50 ${quantile(s, 0.5).toFixed(0).padStart(4)} ms, mean ${mean.toFixed(0).padStart(4)} ms, p95 ${quantile(s, 0.95).toFixed(0).padStart(4)} ms`);
  return mean;
};
const mFull = row('full assessment (new notice)', full);
const mReplan = row('replan 10 min later, work kept in the worker', replan);
row('replan 13 h later (a new track piece at the end)', extend);
row('replan with the stored estimate only (after a restart)', restart);
row('the same replan computed in full', cold);
console.log(`  replan / full: ${(mReplan / mFull).toFixed(3)} (goal <= 0.2); replans equal to the full recomputation: ${equal} of ${COUNT}`);
const f = reuse.tracks.figures();
console.log(`  memory per kept object: ${gc ? `${((after - before) / COUNT / 1024).toFixed(0)} KiB measured (heap + array buffers)` : 'run with --expose-gc to measure'}, ${(f.bytes / f.entries / 1024).toFixed(0)} KiB by the cache's estimate`);
console.log(`  stored estimate: ${(storedBytes / COUNT / 1024).toFixed(0)} KiB per object`);
console.log(`  finished ${new Date().toISOString()}, load ${loadavg().map((x) => x.toFixed(2)).join(' ')}`);
