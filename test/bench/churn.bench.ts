/**
 * Request identity over a simulated night of replans.
 * Run: npx tsx test/bench/churn.bench.ts [objects] [hours] [members] [start ISO]   (default 7, 12, 1000, 2027-03-04T02:00:00Z)
 *
 * The demo configuration's sites and an in-memory store; invented notices (src/planning/simulate.ts)
 * arrive at the start; then every 10 minutes (the default `schedules.replan`) every active object is
 * replanned, as the service does, and windows that passed lapse. Assessments run in this thread.
 * Prints:
 *   - id changes per request within one window: for each object, site, kind and local night, how many
 *     ids were queued for it minus one (goal 0 unless the window moves to another night);
 *   - superseded rows per object, night and kind (goal at most 1);
 *   - revisions per request (how often a replan changed a request in place) and the time per round.
 */
import { parseConfig, DEFAULT_CONFIG_PATH, MIGRATIONS_DIR } from '../../src/config/load.js';
import { readFileSync } from 'node:fs';
import { createIntake } from '../../src/intake/ingest.js';
import { assessInThread, createAssessmentRunner } from '../../src/jobs/assessment-runner.js';
import { runAssessTask } from '../../src/jobs/assess-worker.js';
import { weightsFromConfig } from '../../src/planning/assess.js';
import { simulateNight } from '../../src/planning/simulate.js';
import { openStore } from '../../src/store/index.js';
import { quantile } from './quantile.js';

const objects = Number(process.argv[2] ?? 7);
const hours = Number(process.argv[3] ?? 12);
const members = Number(process.argv[4] ?? 1000);
const startIso = process.argv[5] ?? '2027-03-04T02:00:00Z';
const REPLAN_MIN = 10;

const raw = JSON.parse(readFileSync(DEFAULT_CONFIG_PATH, 'utf8')) as { planning?: Record<string, unknown> };
raw.planning = { ...(raw.planning ?? {}), members };
const config = parseConfig(raw);
const clockAt = { t: Date.parse(startIso) };
const clock = () => new Date(clockAt.t);
const store = openStore(':memory:', MIGRATIONS_DIR, clock);
const intake = createIntake({ notices: store.notices, clock, futureToleranceMin: 5 });
const weights = weightsFromConfig(config.planning.weights);
const runner = createAssessmentRunner({
  config,
  store,
  clock,
  concurrency: 1,
  assessor: assessInThread((input) =>
    runAssessTask({ input, sites: config.sites, horizonH: config.planning.horizonH, members: config.planning.members, weights, rangePrior: config.planning.rangePrior }),
  ),
});

const notices = simulateNight({ now: clock(), count: objects, seed: 16 }).map((s) => s.notice);
for (const n of notices) intake.ingestJson(JSON.stringify(n), 'bench');

// Every id seen queued, by object, site, kind and night.
const idsBySlot = new Map<string, Set<string>>();
const noteQueued = () => {
  for (const r of store.requests.list({ state: 'queued', limit: 10_000 })) {
    const slot = `${r.objectId} ${r.siteId} ${r.kind} ${r.night ?? '?'}`;
    const set = idsBySlot.get(slot) ?? new Set<string>();
    set.add(r.id);
    idsBySlot.set(slot, set);
  }
};

const t0 = performance.now();
await runner.drain();
noteQueued();
const roundMs: number[] = [];
const rounds = Math.floor((hours * 60) / REPLAN_MIN);
for (let k = 1; k <= rounds; k++) {
  clockAt.t += REPLAN_MIN * 60_000;
  store.requests.lapse(clock());
  const r0 = performance.now();
  runner.enqueueActive();
  await runner.drain();
  roundMs.push(performance.now() - r0);
  noteQueued();
}
const wallS = (performance.now() - t0) / 1000;

const all = store.requests.list({ limit: 100_000 });
const changes = [...idsBySlot.values()].map((s) => s.size - 1);
const superseded = new Map<string, number>();
for (const r of all.filter((x) => x.state === 'superseded')) {
  const key = `${r.objectId} ${r.night ?? '?'} ${r.kind}`;
  superseded.set(key, (superseded.get(key) ?? 0) + 1);
}
const revisions = all.map((r) => r.revision);
const byState = store.requests.countByState();
console.log(`churn over a simulated night: ${notices.length} invented objects, ${config.sites.length} sites, replans every ${REPLAN_MIN} min for ${hours} h from ${startIso} (${rounds} rounds), ${members} virtual orbits`);
console.log(`requests made: ${all.length}; by state: ${Object.entries(byState).map(([s, n]) => `${s} ${n}`).join(', ')}`);
console.log(`slots (object, site, kind, night) that had a queued request: ${idsBySlot.size}`);
console.log(`id changes per request within one window: max ${Math.max(0, ...changes)}, total ${changes.reduce((a, b) => a + b, 0)} (goal 0)`);
console.log(`superseded rows per object, night and kind: max ${Math.max(0, ...superseded.values())} over ${superseded.size} (object, night, kind) groups (goal at most 1)`);
console.log(`revisions per request: median ${quantile(revisions, 0.5)}, max ${Math.max(0, ...revisions)}`);
console.log(`time per replan round: median ${(quantile(roundMs, 0.5) / 1000).toFixed(2)} s, max ${(Math.max(...roundMs) / 1000).toFixed(2)} s; wall ${wallS.toFixed(0)} s`);

if (process.env['CHURN_DEBUG']) {
  for (const r of all.filter((x) => x.state === 'superseded')) console.log(r.id, r.objectId, r.siteId, r.kind, r.night, r.windowStart, r.windowEnd, r.stateReason);
}
store.db.close();
