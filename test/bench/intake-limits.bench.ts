/**
 * What the intake limits bound: the time of one whole assessment (orbit
 * estimate, then plans for every configured site, as the assessment worker
 * runs it) against the span of the tracklet and its number of positions.
 * Run: npx tsx test/bench/intake-limits.bench.ts [span|positions|worst|all]   (default all)
 * Prints one line per case: span (days), positions, assessment time (ms).
 * Positions come from the reference generator's truth (test/reference/: an ordinary object seen
 * from its invented survey site), spread evenly over the span, 0.5 arcsec sigma;
 * 1000 virtual orbits and the demo configuration's sites and horizon, as the service uses them.
 */
import { loadConfig } from '../../src/config/load.js';
import { runAssessTask } from '../../src/jobs/assess-worker.js';
import { MAX_OBSERVATIONS } from '../../src/intake/notice.js';
import { MAX_ARC_DAYS, MAX_OBJECT_OBSERVATIONS } from '../../src/intake/tracklet-rules.js';
import type { GeodeticLocation } from '../../src/config/schema.js';
import type { TrackletObservation } from '../../src/domain/tracklet.js';
import { REFERENCE_SURVEY_SITE, referenceCases, referencePlacesFrom } from '../reference/cases.js';

const mode = process.argv[2] ?? 'all';
const config = loadConfig({ env: {}, cwd: process.cwd() });
const [truth] = referenceCases('ordinary', 1);
const seed = Number(truth!.id.split('-')[1]);
const t0 = Date.parse(truth!.observations[0]!.t);
const DAY_MS = 86_400_000;
const SURVEY: GeodeticLocation = { latDeg: REFERENCE_SURVEY_SITE.latDeg, lonDeg: REFERENCE_SURVEY_SITE.lonDeg, heightM: REFERENCE_SURVEY_SITE.heightM };

function tracklet(count: number, spanDays: number): TrackletObservation[] {
  const times = Array.from({ length: count }, (_, k) => t0 + (k * spanDays * DAY_MS) / Math.max(1, count - 1));
  return referencePlacesFrom('ordinary', seed, REFERENCE_SURVEY_SITE, times).map((place, k) => ({
    t: new Date(times[k]!).toISOString(),
    raDeg: place.raDeg,
    decDeg: place.decDeg,
    sigmaArcsec: 0.5,
    mag: null,
    band: null,
    observer: SURVEY,
  }));
}

function measure(count: number, spanDays: number, note: string): void {
  const observations = tracklet(count, spanDays);
  const nowIso = new Date(Date.parse(observations.at(-1)!.t) + 3_600_000).toISOString();
  const start = performance.now();
  let outcome = 'assessed';
  try {
    runAssessTask({ input: { objectId: 'BENCH01', observations, orbit: null, nowIso }, sites: config.sites, horizonH: config.planning.horizonH, members: config.planning.members, weights: {} });
  } catch (err) {
    outcome = `refused: ${(err as Error).message.slice(0, 80)}`;
  }
  console.log(`${spanDays.toString().padStart(5)} d  ${count.toString().padStart(4)} positions  ${Math.round(performance.now() - start).toString().padStart(7)} ms  ${outcome}${note ? `  (${note})` : ''}`);
}

console.log(`limits: ${MAX_ARC_DAYS} days per object, ${MAX_OBJECT_OBSERVATIONS} positions per object, ${MAX_OBSERVATIONS} per notice; ${config.planning.members} virtual orbits, ${config.sites.length} sites, ${config.planning.horizonH} h`);
measure(6, 1, 'warm-up, not counted');
if (mode === 'span' || mode === 'all') for (const d of [0.05, 1, 3, 10, 30]) measure(6, d, d === MAX_ARC_DAYS ? 'the span limit' : d > MAX_ARC_DAYS ? 'beyond the limit' : '');
if (mode === 'positions' || mode === 'all')
  for (const n of [6, 50, 100, 200, 500]) measure(n, 1, n === MAX_OBSERVATIONS ? 'the per-notice limit' : n === MAX_OBJECT_OBSERVATIONS ? 'the per-object limit' : n > MAX_OBJECT_OBSERVATIONS ? 'beyond the limit' : '');
if (mode === 'worst' || mode === 'all') measure(MAX_OBJECT_OBSERVATIONS, MAX_ARC_DAYS, 'the worst the limits allow');
