/**
 * Sky benchmarks and a long randomized check of observable windows.
 * Run: npx tsx test/bench/sky-windows.bench.ts [cases]
 * Prints: cost of a site frame + Sun/Moon, of one limit evaluation, of observableWindows over
 * 36 h with and without a shared sky timeline, and the result of a minute-by-minute check
 * of random windows (count of windows, minutes checked, violations).
 */
import { loadConfig } from '../../src/config/load.js';
import type { Site } from '../../src/config/schema.js';
import { evaluateLimits, evaluateLimitsInSky, prepareLimits, type TargetState } from '../../src/sky/limits.js';
import { buildSkyTimeline, skyAt, skyFromTimeline } from '../../src/sky/timeline.js';
import { observableWindows } from '../../src/sky/windows.js';

const config = loadConfig({ env: {} });
const sites = config.sites;
const site = sites[0]!;
const start = new Date('2027-03-15T18:00:00Z');
const end = new Date(start.getTime() + 36 * 3_600_000);

function time(label: string, n: number, fn: (i: number) => void): void {
  const t0 = performance.now();
  for (let i = 0; i < n; i++) fn(i);
  const ms = performance.now() - t0;
  console.log(`${label}: ${((ms * 1000) / n).toFixed(1)} us per call (${n} calls, ${ms.toFixed(0)} ms)`);
}

let seed = 12345;
const rand = () => ((seed = (seed * 1103515245 + 12345) % 2 ** 31) / 2 ** 31);

time('skyAt (site frame + Sun + Moon)', 2000, (i) => skyAt(site, new Date(start.getTime() + i * 60_000)));
const sky = skyAt(site, new Date('2027-03-16T07:00:00Z'));
const tl = buildSkyTimeline(site, start, end);
time('skyFromTimeline (interpolated sky)', 20000, (i) => skyFromTimeline(tl, new Date(start.getTime() + (i % 2000) * 60_000)));
const prepared = prepareLimits(site);
time('evaluateLimitsInSky (one target, prepared sky and limits)', 20000, (i) => evaluateLimitsInSky(site, sky, { raDeg: i % 360, decDeg: 20 }, prepared));
const targets = Array.from({ length: 200 }, () => ({ raDeg: rand() * 360, decDeg: -40 + rand() * 120 }));
time('observableWindows 36 h, fixed targets, no timeline', 200, (i) => observableWindows(site, start, end, () => targets[i]!));
const timeline = buildSkyTimeline(site, start, end);
time('observableWindows 36 h, fixed targets, shared timeline', 200, (i) => observableWindows(site, start, end, () => targets[i]!, { timeline }));
let evals = 0;
for (const t of targets) evals += observableWindows(site, start, end, () => t, { timeline }).evaluations;
console.log(`mean limit evaluations per 36 h call (fixed targets): ${(evals / targets.length).toFixed(0)}`);

const cases = Number(process.argv[2] ?? 100);
let windows = 0;
let minutesChecked = 0;
let violations = 0;
const t0 = performance.now();
for (let c = 0; c < cases; c++) {
  const base = sites[c % sites.length]!;
  const s: Site = { ...base, location: { latDeg: -60 + rand() * 120, lonDeg: -180 + rand() * 360, heightM: 1000 } };
  const from = new Date(Date.UTC(2027, 0, 1) + Math.floor(rand() * 365) * 86_400_000);
  const to = new Date(from.getTime() + 18 * 3_600_000);
  const ra0 = rand() * 360;
  const dec0 = -70 + rand() * 150;
  const raRate = (rand() - 0.5) * 0.2;
  const decRate = (rand() - 0.5) * 0.2;
  const targetAt = (t: Date): TargetState => {
    const dtS = (t.getTime() - from.getTime()) / 1000;
    const decDeg = Math.max(-89, Math.min(89, dec0 + (decRate * dtS) / 3600));
    const raDeg = (((ra0 + (raRate * dtS) / 3600 / Math.cos((decDeg * Math.PI) / 180)) % 360) + 360) % 360;
    return { raDeg, decDeg, raRateArcsecPerS: raRate, decRateArcsecPerS: decRate };
  };
  const result = observableWindows(s, from, to, targetAt);
  for (const w of result.windows) {
    windows++;
    for (let t = w.start.getTime(); t <= w.end.getTime(); t += 60_000) {
      minutesChecked++;
      if (!evaluateLimits(s, new Date(t), targetAt(new Date(t))).ok) violations++;
    }
  }
}
console.log(
  `random check: ${cases} cases, ${windows} windows, ${minutesChecked} minutes checked, ${violations} violations (${((performance.now() - t0) / 1000).toFixed(1)} s)`,
);
