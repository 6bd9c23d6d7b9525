/**
 * Short-arc estimation benchmark and calibration.
 * Run: npx tsx test/bench/estimation.bench.ts [speed|calibration|priors|all] [cases per kind] [prior]   (default all, 30, the default prior)
 * Prints:
 *   speed        - time per notice (4 observations, 1000 virtual orbits, ephemeris at +1..+48 h
 *                  hourly from another site), split into fit+ranging, summary and ephemeris; heap growth.
 *   calibration  - per horizon (+1, +3, +6, +12, +24, +48 h) over the generator's cases: median and
 *                  90th-percentile error of the nominal, median error of linear extrapolation,
 *                  fraction of truths inside the 3-sigma ellipse, median 1-sigma major axis and its
 *                  ratio to the median error; for all cases and per kind; the truths' range inside the
 *                  reported 5-95 % interval. [prior]: 'population', 'powerLaw' or a number k (rho^k).
 *   priors       - the same bar for range priors rho^k, k = -1 (flat in log range), -0.5, 0 (flat in range), 0.5,
 *                  and the population prior, with a one-line summary of each.
 * Cases come from src/orbit/estimation/synthetic.ts (invented sites, independent RK4 truth).
 */
import { estimateObject } from '../../src/orbit/estimation/index.js';
import type { RangingOptions } from '../../src/orbit/estimation/ranging.js';
import { evaluateCaseWithRange, FOLLOW_UP_SITE, generateCase, generateCases, type CalibrationCase, type HorizonResult } from '../../src/orbit/estimation/synthetic.js';

const mode = process.argv[2] ?? 'all';
const perKind = Number(process.argv[3] ?? 30);
const priorArg = process.argv[4];
const rangingOf = (arg: string | undefined): RangingOptions => {
  if (arg === undefined) return {};
  if (arg === 'population' || arg === 'powerLaw') return { rangePrior: arg };
  const k = Number(arg);
  if (!Number.isFinite(k)) throw new Error(`prior = ${arg}: expected 'population', 'powerLaw' or a number k`);
  return { rangePrior: 'powerLaw', rangePriorExponent: k };
};

const quantile = (values: number[], p: number): number => {
  const s = [...values].sort((a, b) => a - b);
  if (s.length === 0) return Number.NaN;
  const x = p * (s.length - 1);
  const i = Math.floor(x);
  return s[i]! + (i + 1 < s.length ? (x - i) * (s[i + 1]! - s[i]!) : 0);
};

function table(label: string, results: HorizonResult[][]): void {
  console.log(`\n${label} (${results.length} cases)`);
  console.log('| horizon | median error | p90 error | median linear | inside 3 sigma | median major (1 sigma) | major / error |');
  console.log('|---|---|---|---|---|---|---|');
  const horizons = results[0]?.map((r) => r.hours) ?? [];
  horizons.forEach((hours, j) => {
    const rows = results.map((r) => r[j]!);
    const err = rows.map((r) => r.nominalErrorArcsec);
    const major = rows.map((r) => r.majorArcsec);
    const inside = rows.filter((r) => r.sigmaDistance <= 3).length / rows.length;
    const fmt = (x: number) => (x >= 100 ? x.toFixed(0) : x.toFixed(1));
    console.log(
      `| +${hours} h | ${fmt(quantile(err, 0.5))}" | ${fmt(quantile(err, 0.9))}" | ${fmt(quantile(rows.map((r) => r.linearErrorArcsec), 0.5))}" | ${(100 * inside).toFixed(1)} % | ${fmt(quantile(major, 0.5))}" | ${(quantile(major, 0.5) / quantile(err, 0.5)).toFixed(2)} |`,
    );
  });
}

function cases(): CalibrationCase[] {
  const t0 = performance.now();
  const all = [...generateCases('close', perKind, 1), ...generateCases('ordinary', perKind, 1)];
  console.log(`generated ${all.length} cases in ${((performance.now() - t0) / 1000).toFixed(1)} s`);
  return all;
}

function calibration(all: CalibrationCase[], ranging: RangingOptions = {}, label = 'all cases'): void {
  const results: { c: CalibrationCase; r: HorizonResult[]; range: { p5: number; p50: number; p95: number } }[] = [];
  const t0 = performance.now();
  const perCase: number[] = [];
  for (const c of all) {
    const tc = performance.now();
    const evaluated = evaluateCaseWithRange(c, { members: 1000, seed: 1, ranging });
    results.push({ c, r: evaluated.horizons, range: evaluated.rangeAu });
    perCase.push(performance.now() - tc);
  }
  console.log(`estimated ${all.length} cases in ${((performance.now() - t0) / 1000).toFixed(1)} s: per case (estimate + 6-row ephemeris) median ${quantile(perCase, 0.5).toFixed(0)} ms, p90 ${quantile(perCase, 0.9).toFixed(0)} ms, max ${Math.max(...perCase).toFixed(0)} ms`);
  table(label, results.map((x) => x.r));
  table(`${label}: close approachers (0.002-0.1 au)`, results.filter((x) => x.c.kind === 'close').map((x) => x.r));
  table(`${label}: ordinary`, results.filter((x) => x.c.kind === 'ordinary').map((x) => x.r));
  const misses = results.flatMap((x) => x.r.filter((h) => h.sigmaDistance > 3).map((h) => `${x.c.id}@+${h.hours}h d=${h.sigmaDistance.toFixed(1)}`));
  if (misses.length) console.log(`outside 3 sigma: ${misses.join(', ')}`);
  const rangeLine = (kind: string): string => {
    const rows = results.filter((x) => x.c.kind === kind);
    const inside = rows.filter((x) => x.range.p5 <= x.c.meanEpochRangeAu && x.c.meanEpochRangeAu <= x.range.p95).length;
    const offset = quantile(rows.map((x) => Math.abs(x.range.p50 / x.c.meanEpochRangeAu - 1)), 0.5);
    return `${kind} ${inside}/${rows.length} inside 5-95 %, median |p50/truth - 1| ${offset.toFixed(2)}`;
  };
  console.log(`range at the mean epoch: ${rangeLine('close')}; ${rangeLine('ordinary')}`);
  // One line for the prior comparison: +24 h pooled, ordinary per horizon.
  const at = (kind: string | null, hours: number) => results.filter((x) => kind === null || x.c.kind === kind).map((x) => x.r.find((h) => h.hours === hours)!);
  const ratio = (rows: HorizonResult[]) => quantile(rows.map((r) => r.majorArcsec), 0.5) / quantile(rows.map((r) => r.nominalErrorArcsec), 0.5);
  const inside3 = (rows: HorizonResult[]) => (100 * rows.filter((r) => r.sigmaDistance <= 3).length) / rows.length;
  const h24 = at(null, 24);
  const minInside = Math.min(...['close', 'ordinary'].flatMap((kind) => [1, 3, 6, 12, 24, 48].map((h) => inside3(at(kind, h)))));
  console.log(
    `summary ${label}: +24 h median ${quantile(h24.map((r) => r.nominalErrorArcsec), 0.5).toFixed(0)}" (linear ${quantile(h24.map((r) => r.linearErrorArcsec), 0.5).toFixed(0)}"), inside 3 sigma ${inside3(h24).toFixed(1)} %, major/error ${ratio(h24).toFixed(2)}, +48 h major/error ${ratio(at(null, 48)).toFixed(2)}; ` +
      `lowest inside 3 sigma per kind and horizon ${minInside.toFixed(1)} %; ` +
      `close +24 h median ${quantile(at('close', 24).map((r) => r.nominalErrorArcsec), 0.5).toFixed(0)}" (linear ${quantile(at('close', 24).map((r) => r.linearErrorArcsec), 0.5).toFixed(0)}"), major/error by horizon ${[1, 3, 6, 12, 24, 48].map((h) => ratio(at('close', h)).toFixed(2)).join(' ')}; ` +
      `ordinary +24 h median ${quantile(at('ordinary', 24).map((r) => r.nominalErrorArcsec), 0.5).toFixed(1)}" (linear ${quantile(at('ordinary', 24).map((r) => r.linearErrorArcsec), 0.5).toFixed(1)}"), major/error by horizon ${[1, 3, 6, 12, 24, 48].map((h) => ratio(at('ordinary', h)).toFixed(2)).join(' ')}`,
  );
}

function speed(): void {
  let c: CalibrationCase | null = null;
  for (let seed = 1; !c; seed++) {
    const candidate = generateCase('close', seed);
    if (candidate && candidate.observations.length === 4) c = candidate;
  }
  for (let seed = 1; seed < 200; seed++) {
    const candidate = generateCase('ordinary', seed);
    if (candidate && candidate.observations.length === 4) {
      run('ordinary', candidate);
      break;
    }
  }
  run('close', c);

  function run(kind: string, notice: CalibrationCase): void {
    const times = Array.from({ length: 48 }, (_, k) => new Date(notice.lastObservationMs + (k + 1) * 3_600_000));
    const samples: number[][] = [];
    const heapBefore = process.memoryUsage().heapUsed;
    let heapPeak = heapBefore;
    for (let repeat = 0; repeat < 5; repeat++) {
      const t0 = performance.now();
      const estimate = estimateObject({ objectId: notice.id, observations: notice.observations, now: new Date(notice.lastObservationMs), members: 1000, seed: repeat + 1 });
      const t1 = performance.now();
      estimate.ephemeris(FOLLOW_UP_SITE, times);
      const t2 = performance.now();
      heapPeak = Math.max(heapPeak, process.memoryUsage().heapUsed);
      samples.push([t1 - t0, t2 - t1, t2 - t0]);
    }
    const med = (k: number) => quantile(samples.map((s) => s[k]!), 0.5).toFixed(0);
    console.log(`${kind} notice ${notice.id} (4 observations, range ${notice.rangeAu.toFixed(3)} au): estimate ${med(0)} ms, 48-row ephemeris ${med(1)} ms, total ${med(2)} ms (median of 5); heap growth ${((heapPeak - heapBefore) / 1e6).toFixed(0)} MB`);
  }
}

if (mode === 'speed' || mode === 'all') speed();
if (mode === 'calibration' || mode === 'all' || mode === 'priors') {
  const all = cases();
  if (mode !== 'priors') calibration(all, rangingOf(priorArg), priorArg === undefined ? 'all cases' : `all cases, prior ${priorArg}`);
  if (mode === 'priors') {
    for (const k of [-1, -0.5, 0, 0.5]) calibration(all, { rangePrior: 'powerLaw', rangePriorExponent: k }, `prior rho^${k}`);
    calibration(all, { rangePrior: 'population' }, 'prior population');
  }
}
