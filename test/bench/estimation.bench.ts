/**
 * Short-arc estimation speed.
 * Run: npx tsx test/bench/estimation.bench.ts [case id ...]
 *   with case ids (e.g. encounter-21042 ordinary-21154), those reference cases instead of one
 *   4-position notice per population, each with the rounds of proposals its seeds drew.
 * Prints, for a 4-position notice of each reference population (test/reference/, invented data):
 * time per estimate (attributable, ranging, sampling the virtual orbits, summary) with 1000 virtual
 * orbits, time of a 48-row hourly ephemeris from the follow-up site, their total (median of 5 runs
 * with seeds 1-5), the ranging's evaluated nodes and the sampling's effective sample size, and the
 * heap growth. Accuracy is the calibration bench's: test/bench/reference-calibration.bench.ts.
 */
import { estimateObject } from '../../src/orbit/estimation/index.js';
import { REFERENCE_FOLLOW_UP_SITE, REFERENCE_POPULATIONS, referenceCase, referenceCases, type ReferenceCase, type ReferencePopulation } from '../reference/cases.js';
import { trackletOf } from '../orbit/estimation/reference-scorer.js';

const quantile = (values: number[], p: number): number => {
  const s = [...values].sort((a, b) => a - b);
  const x = p * (s.length - 1);
  const i = Math.floor(x);
  return s[i]! + (i + 1 < s.length ? (x - i) * (s[i + 1]! - s[i]!) : 0);
};

function fourPositionCase(population: ReferencePopulation): ReferenceCase {
  for (let seed = 1; seed < 500; seed++) {
    const c = referenceCase(population, seed);
    if (c && c.observations.length === 4) return c;
  }
  throw new Error(`no 4-position ${population} case`);
}

const site = { latDeg: REFERENCE_FOLLOW_UP_SITE.latDeg, lonDeg: REFERENCE_FOLLOW_UP_SITE.lonDeg, heightM: REFERENCE_FOLLOW_UP_SITE.heightM };
function namedCase(id: string): ReferenceCase {
  const [population, seed] = id.split('-');
  if (!REFERENCE_POPULATIONS.includes(population as ReferencePopulation)) throw new Error(`${id}: expected <population>-<seed>, population one of ${REFERENCE_POPULATIONS.join(', ')}`);
  const c = referenceCases(population as ReferencePopulation, 1, Number(seed))[0];
  if (c?.id !== id) throw new Error(`${id}: no reference case with that seed`);
  return c;
}

const chosen = process.argv.length > 2 ? process.argv.slice(2).map(namedCase) : REFERENCE_POPULATIONS.map(fourPositionCase);
for (const c of chosen) {
  const population = c.population;
  const observations = trackletOf(c);
  const times = Array.from({ length: 48 }, (_, k) => new Date(c.lastObservationMs + (k + 1) * 3_600_000));
  const samples: number[][] = [];
  const heapBefore = process.memoryUsage().heapUsed;
  let heapPeak = heapBefore;
  let info = '';
  let twoRounds = 0;
  for (let repeat = 0; repeat < 5; repeat++) {
    const t0 = performance.now();
    const estimate = estimateObject({ objectId: c.id, observations, now: new Date(c.lastObservationMs), members: 1000, seed: repeat + 1 });
    const t1 = performance.now();
    estimate.ephemeris(site, times);
    const t2 = performance.now();
    heapPeak = Math.max(heapPeak, process.memoryUsage().heapUsed);
    samples.push([t1 - t0, t2 - t1, t2 - t0]);
    if (estimate.summary.notes.some((n) => n.includes('in two rounds'))) twoRounds++;
    info = `${estimate.ranging?.evaluatedNodes ?? 0} nodes, effective sample size ${Math.round(estimate.ranging?.effectiveSampleSize ?? 0)} (last seed), two rounds of proposals in ${twoRounds} of 5`;
  }
  const med = (k: number) => quantile(samples.map((s) => s[k]!), 0.5).toFixed(0);
  console.log(`${population} notice ${c.id} (${c.observations.length} positions, ${c.meanEpochRangeAu.toFixed(3)} au): estimate ${med(0)} ms, 48-row ephemeris ${med(1)} ms, total ${med(2)} ms (median of 5; ${info}); heap growth ${((heapPeak - heapBefore) / 1e6).toFixed(0)} MB`);
}
