/**
 * The short-arc estimator against the independent reference generator (test/reference/).
 * Run: npx tsx test/bench/reference-calibration.bench.ts [cases per population] [first seed] [prior]
 *   defaults 60, 1, the estimator's default prior; prior: 'mixture', 'mixture:<encounter ln weight>',
 *   'mixture:<encounter ln weight>:<encounter window, days>', 'population', 'encounter', 'powerLaw' or a number k (rho^k).
 * Pooled: in place of the count and first seed, a list of sets <count>@<first seed>, e.g.
 *   npx tsx test/bench/reference-calibration.bench.ts 40@1,40@11001,100@21001,80@31001,60@41001 - [prior]
 *   scores every set and prints the figures of all of them together (the second argument is ignored).
 * Each population ends with the chance that a fresh set of BOOTSTRAP_SIZE (env, default 100) such cases
 * meets each cell of the bar, by the bootstrap.
 * Cases are generated once and kept in $TMPDIR/nightjar-reference-cases-v<version>-<population>-<seed>-<count>.json
 * (generation takes 1-4 s a case); delete those files to regenerate.
 * Prints, per population and horizon (+1 ... +48 h after the last position, the follow-up and the
 * survey site pooled): truth inside the 3-sigma ellipse, median and p90 error of the nominal, median
 * error of linear extrapolation, median floor (the error left by the positions' noise alone, which no
 * estimator from the positions can beat: test/reference/sky-geometry.ts), median 1-sigma major axis and its ratio to the median error, V inside
 * 3 magSigma, the same ratio with the truth replaced by the posterior's own draws (20 virtual orbits a row at a stride through the ensemble:
 * what the sharpness would read for a calibrated posterior with these clouds) and the share of those draws inside 3 sigma; then the range coverage, the +24 h nominal/linear ratio, the time per case and every miss.
 */
import type { RangingOptions } from '../../src/orbit/estimation/ranging.js';
import { REFERENCE_HORIZONS_H, REFERENCE_POPULATIONS, type ReferencePopulation } from '../reference/cases.js';
import { cachedReferenceCases, caseSetsOf } from './reference-case-cache.js';
import { referenceRandom } from '../reference/random.js';
import { ESTIMATOR_BAR, horizonFigures, median, rangeCoverage, scoreCase, type ScoredCase } from '../orbit/estimation/reference-scorer.js';

/** The case sets to score together: [count, first seed] each. */
const setsArg = process.argv[2] ?? '60';
const sets = caseSetsOf(setsArg.includes('@') ? setsArg : `${setsArg}@${process.argv[3] ?? 1}`);
const priorArg = process.argv[4];
const only = process.env.POPULATIONS?.split(',') as ReferencePopulation[] | undefined;

function rangingOf(arg: string | undefined): RangingOptions {
  if (arg === undefined) return {};
  if (arg === 'population' || arg === 'powerLaw' || arg === 'mixture' || arg === 'encounter') return { rangePrior: arg };
  if (arg.startsWith('mixture:')) {
    const [weight, windowDays] = arg.slice('mixture:'.length).split(':');
    return { rangePrior: 'mixture', mixtureEncounterLogWeight: Number(weight), ...(windowDays === undefined ? {} : { encounterWindowDays: Number(windowDays) }) };
  }
  const k = Number(arg);
  if (!Number.isFinite(k)) throw new Error(`prior = ${arg}: expected 'mixture', 'mixture:<weight>', 'population', 'powerLaw' or a number k`);
  return { rangePrior: 'powerLaw', rangePriorExponent: k };
}

/** The lowest effective sample size and its cases (the three lowest). */
function lowestSampled(scored: readonly ScoredCase[]): string {
  const sampled = scored.filter((s) => s.effectiveSampleSize !== null).sort((a, b) => a.effectiveSampleSize! - b.effectiveSampleSize!);
  if (sampled.length === 0) return 'none';
  return `${sampled[0]!.effectiveSampleSize!.toFixed(0)} (${sampled.slice(0, 3).map((s) => `${s.id} ${s.effectiveSampleSize!.toFixed(0)}`).join(', ')})`;
}

/** Whether a set of scored cases meets each cell of the bar. */
function barCells(scored: readonly ScoredCase[]): Record<'coverage' | 'range' | 'sharpness' | 'nominalVsLinear' | 'magnitudes', boolean> {
  const figures = REFERENCE_HORIZONS_H.map((h) => horizonFigures(scored, h));
  const h24 = figures[REFERENCE_HORIZONS_H.indexOf(24)]!;
  return {
    coverage: Math.min(...figures.map((f) => f.inside3Sigma)) >= ESTIMATOR_BAR.inside3Sigma,
    range: rangeCoverage(scored) >= ESTIMATOR_BAR.rangeCoverage,
    sharpness: Math.max(...figures.map((f) => f.majorOverError)) <= ESTIMATOR_BAR.maxMajorOverError,
    nominalVsLinear: h24.medianErrorArcsec / h24.medianLinearArcsec <= ESTIMATOR_BAR.maxNominalOverLinearAt24h,
    magnitudes: Math.min(...figures.map((f) => f.magInside3Sigma)) >= ESTIMATOR_BAR.magInside3Sigma,
  };
}

/**
 * How often a fresh set of `size` cases would meet each cell, estimated by
 * the bootstrap (Efron & Tibshirani 1993, An Introduction to the Bootstrap,
 * ch. 6): sets of `size` drawn with replacement from the scored cases, each
 * scored against the bar. It says how far a cell stands from its threshold
 * in the units that matter (a cell met 55 % of the time is a coin toss on the
 * next set), not how the estimator would do on cases unlike these.
 */
function chanceOfMeeting(scored: readonly ScoredCase[], size: number, resamples: number): Record<keyof ReturnType<typeof barCells>, number> {
  const random = referenceRandom(20_261_202);
  const met = { coverage: 0, range: 0, sharpness: 0, nominalVsLinear: 0, magnitudes: 0 };
  for (let r = 0; r < resamples; r++) {
    const sample = Array.from({ length: size }, () => scored[Math.floor(random.uniform() * scored.length)]!);
    const cells = barCells(sample);
    for (const key of Object.keys(met) as (keyof typeof met)[]) if (cells[key]) met[key]++;
  }
  for (const key of Object.keys(met) as (keyof typeof met)[]) met[key] /= resamples;
  return met;
}
const BOOTSTRAP_SIZE = Number(process.env.BOOTSTRAP_SIZE ?? 100);
const BOOTSTRAP_RESAMPLES = 2000;

const fmt = (x: number): string => (!Number.isFinite(x) ? String(x) : x >= 100 ? x.toFixed(0) : x >= 10 ? x.toFixed(1) : x.toFixed(2));
const pct = (x: number): string => `${(100 * x).toFixed(1)} %`;

const ranging = rangingOf(priorArg);
const allScored: ScoredCase[] = [];
for (const population of REFERENCE_POPULATIONS.filter((p) => !only || only.includes(p))) {
  const cases = sets.flatMap(([count, seed]) => cachedReferenceCases(population, count, seed));
  const scored = cases.map((c) => scoreCase(c, { members: 1000, seed: 1, ranging }));
  allScored.push(...scored);
  console.log(`\n### ${population} (${scored.length} cases, both sites pooled${priorArg ? `, prior ${priorArg}` : ''})`);
  console.log('| horizon | inside 3σ | median error | p90 error | median linear | median floor | median 1σ major | major / error | V inside 3 magSigma | major / error if calibrated | draws inside 3σ |');
  console.log('|---|---|---|---|---|---|---|---|---|---|---|');
  for (const hours of REFERENCE_HORIZONS_H) {
    const f = horizonFigures(scored, hours);
    console.log(`| +${hours} h | ${pct(f.inside3Sigma)} | ${fmt(f.medianErrorArcsec)}" | ${fmt(f.p90ErrorArcsec)}" | ${fmt(f.medianLinearArcsec)}" | ${fmt(f.medianFloorArcsec)}" | ${fmt(f.medianMajorArcsec)}" | ${f.majorOverError.toFixed(2)} | ${pct(f.magInside3Sigma)} | ${f.majorOverDrawDistance.toFixed(2)} | ${pct(f.drawsInside3Sigma)} |`);
  }
  const h24 = horizonFigures(scored, 24);
  const worstInside = Math.min(...REFERENCE_HORIZONS_H.map((h) => horizonFigures(scored, h).inside3Sigma));
  const worstRatio = Math.max(...REFERENCE_HORIZONS_H.map((h) => horizonFigures(scored, h).majorOverError));
  const worstMag = Math.min(...REFERENCE_HORIZONS_H.map((h) => horizonFigures(scored, h).magInside3Sigma));
  const range = rangeCoverage(scored);
  const nominalOverLinear = h24.medianErrorArcsec / h24.medianLinearArcsec;
  const floorOverLinear = h24.medianFloorArcsec / h24.medianLinearArcsec;
  console.log(
    `range inside 5-95 %: ${pct(range)}; +24 h nominal / linear ${nominalOverLinear.toFixed(2)} (floor / linear ${floorOverLinear.toFixed(2)}); ` +
      `time per case (estimate + 12 rows) median ${median(scored.map((s) => s.milliseconds)).toFixed(0)} ms, max ${Math.max(...scored.map((s) => s.milliseconds)).toFixed(0)} ms; ` +
      `effective sample size median ${median(scored.map((s) => s.effectiveSampleSize ?? Number.NaN)).toFixed(0)}, lowest ${lowestSampled(scored)} (of 2000 proposals; 4000 when a second round was drawn), ${scored.filter((s) => (s.effectiveSampleSize ?? Infinity) < 100).length} cases below 100; ` +
      `positions flagged as outliers ${scored.reduce((n, s) => n + s.outliers, 0)} in ${scored.filter((s) => s.outliers > 0).length} cases`,
  );
  const verdict = [
    worstInside >= ESTIMATOR_BAR.inside3Sigma ? 'coverage met' : `coverage MISSED (lowest ${pct(worstInside)})`,
    range >= ESTIMATOR_BAR.rangeCoverage ? 'range met' : 'range MISSED',
    worstRatio <= ESTIMATOR_BAR.maxMajorOverError ? 'sharpness met' : `sharpness MISSED (worst ${worstRatio.toFixed(2)})`,
    nominalOverLinear <= ESTIMATOR_BAR.maxNominalOverLinearAt24h
      ? 'nominal vs linear met'
      : floorOverLinear > ESTIMATOR_BAR.maxNominalOverLinearAt24h
        ? `nominal vs linear MISSED, out of reach: even the floor is ${floorOverLinear.toFixed(2)} of linear (nominal ${(h24.medianErrorArcsec / h24.medianFloorArcsec).toFixed(2)} x floor)`
        : 'nominal vs linear MISSED',
    worstMag >= ESTIMATOR_BAR.magInside3Sigma ? 'magnitudes met' : `magnitudes MISSED (lowest ${pct(worstMag)})`,
  ];
  console.log(`bar for ${population}: ${verdict.join('; ')}`);
  const misses = scored.flatMap((s) => s.horizons.filter((h) => h.sigmaDistance > 3).map((h) => `${s.id}@${h.site}+${h.hours}h ${h.sigmaDistance.toFixed(1)}σ`));
  if (misses.length) console.log(`outside 3σ: ${misses.join(', ')}`);
  const pit = [0, 0, 0, 0, 0];
  for (const s of scored) pit[Math.min(4, Math.floor(s.rangeQuantile * 5))]!++;
  console.log(`truth's quantile in the range posterior, by fifths (even when calibrated): ${pit.join(' / ')}`);
  const rangeMisses = scored.filter((s) => !(s.rangeAu.p5 <= s.trueRangeAu && s.trueRangeAu <= s.rangeAu.p95));
  const chance = chanceOfMeeting(scored, BOOTSTRAP_SIZE, BOOTSTRAP_RESAMPLES);
  console.log(
    `chance that a set of ${BOOTSTRAP_SIZE} such cases meets each cell (bootstrap, ${BOOTSTRAP_RESAMPLES} resamples of these ${scored.length}): ` +
      `coverage ${pct(chance.coverage)}, range ${pct(chance.range)}, sharpness ${pct(chance.sharpness)}, nominal vs linear ${pct(chance.nominalVsLinear)}, magnitudes ${pct(chance.magnitudes)}`,
  );
  console.log(`cases outside 3σ at some horizon: ${scored.filter((s) => s.horizons.some((h) => h.sigmaDistance > 3)).length} of ${scored.length}`);
  if (rangeMisses.length) console.log(`range outside 5-95 %: ${rangeMisses.map((s) => `${s.id} truth ${s.trueRangeAu.toFixed(4)} [${s.rangeAu.p5.toFixed(4)}, ${s.rangeAu.p95.toFixed(4)}]`).join('; ')}`);
}
