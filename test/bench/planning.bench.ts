/**
 * Planning benchmark and a minute-by-minute check of request windows.
 * Run: npx tsx test/bench/planning.bench.ts [objects]
 * Prints: time to plan one object at both demo sites (with a one-orbit estimate and with the
 * estimator's ensemble), the share of sites with requests, and the result of checking every
 * minute of every request window against the exact hard limits (violations should be 0).
 */
import { loadConfig } from '../../src/config/load.js';
import { parseNotice } from '../../src/intake/notice.js';
import { trackletOf } from '../../src/commands/notice-file.js';
import { elementsFromNoticeOrbit } from '../../src/commands/ephemeris.js';
import { estimateObject } from '../../src/orbit/estimation/index.js';
import { estimateFromElements } from '../../src/planning/estimate-from-elements.js';
import { planObject } from '../../src/planning/plan-object.js';
import { simulateNight } from '../../src/planning/simulate.js';
import { evaluateLimits } from '../../src/sky/limits.js';

const count = Number(process.argv[2] ?? 14);
const config = loadConfig({ env: {} });
const now = new Date('2027-03-16T02:00:00Z');
const notices = simulateNight({ now, count, seed: 7, withOrbit: true }).map((s) => {
  const parsed = parseNotice(s.notice, { now, checkAge: true });
  if (!parsed.ok) throw new Error('invented notice rejected');
  return { kind: s.kind, notice: parsed.notice };
});

let planMs = 0;
let ensemblePlanMs = 0;
let estimateMs = 0;
let sitesWithRequests = 0;
let requests = 0;
let minutesChecked = 0;
let violations = 0;
for (const { notice } of notices) {
  const { elements, epochTt } = elementsFromNoticeOrbit(notice.orbit!);
  const estimate = estimateFromElements({ objectId: notice.objectId, firstObservedAt: notice.observations![0]!.t, elements, epochTt, hMag: notice.orbit!.H ?? null });
  let t0 = performance.now();
  const plan = planObject({ estimate, sites: config.sites, now, horizonH: config.planning.horizonH });
  planMs += performance.now() - t0;
  for (const sitePlan of plan.sites) {
    if (sitePlan.requests.length > 0) sitesWithRequests++;
    const site = config.sites.find((s) => s.id === sitePlan.siteId)!;
    for (const r of sitePlan.requests) {
      requests++;
      const times: Date[] = [];
      for (let t = Date.parse(r.windowStart); t <= Date.parse(r.windowEnd); t += 60_000) times.push(new Date(t));
      const rows = estimate.ephemeris(site.location, times);
      rows.forEach((row, k) => {
        minutesChecked++;
        const report = evaluateLimits(site, times[k]!, { raDeg: row.ra, decDeg: row.dec, raRateArcsecPerS: row.raRate, decRateArcsecPerS: row.decRate });
        if (!report.ok) {
          violations++;
          console.log(`violation: ${notice.objectId} ${r.siteId} ${r.kind} at ${row.t}: ${report.failing.join(', ')}`);
        }
      });
    }
  }
  // The same notice through the estimator (tracklet only, 200 virtual orbits).
  const trackletOnly = { ...notice };
  delete trackletOnly.orbit;
  t0 = performance.now();
  const ensemble = estimateObject({ objectId: notice.objectId, observations: trackletOf(trackletOnly), now, members: 200, seed: 1 });
  estimateMs += performance.now() - t0;
  t0 = performance.now();
  planObject({ estimate: ensemble, sites: config.sites, now, horizonH: config.planning.horizonH });
  ensemblePlanMs += performance.now() - t0;
}
const n = notices.length;
console.log(`objects: ${n}; demo sites: ${config.sites.length}; horizon ${config.planning.horizonH} h`);
console.log(`planObject, one-orbit estimate: ${(planMs / n).toFixed(0)} ms per object (both sites)`);
console.log(`estimateObject, 200 virtual orbits from the tracklet: ${(estimateMs / n).toFixed(0)} ms per object`);
console.log(`planObject, 200-member ensemble estimate: ${(ensemblePlanMs / n).toFixed(0)} ms per object (both sites)`);
console.log(`sites with requests: ${sitesWithRequests} of ${n * config.sites.length}; requests: ${requests}`);
console.log(`request-window minutes checked against the exact limits: ${minutesChecked}; violations: ${violations}`);
