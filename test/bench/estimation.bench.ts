/**
 * Short-arc estimation benchmark and calibration.
 * Run: npx tsx test/bench/estimation.bench.ts [speed|calibration|priors|all] [cases per kind]   (default all, 30)
 * Prints:
 *   speed        - time per notice (4 observations, 1000 virtual orbits, ephemeris at +1..+48 h
 *                  hourly from another site), split into fit+ranging, summary and ephemeris; heap growth.
 *   calibration  - per horizon (+1, +3, +6, +12, +24, +48 h) over the generator's cases: median and
 *                  90th-percentile error of the nominal, median error of linear extrapolation,
 *                  fraction of truths inside the 3-sigma ellipse, median 1-sigma major axis and its
 *                  ratio to the median error; for all cases and per kind.
 *   priors       - the same bar for range priors rho^k, k = -1 (flat in log range), -0.5, 0 (flat in range), 0.5.
 * Cases come from src/orbit/estimation/synthetic.ts (invented sites, independent RK4 truth).
 */
import { estimateObject } from '../../src/orbit/estimation/index.js';
import { evaluateCase, FOLLOW_UP_SITE, generateCase, generateCases, type CalibrationCase, type HorizonResult } from '../../src/orbit/estimation/synthetic.js';

const mode = process.argv[2] ?? 'all';
const perKind = Number(process.argv[3] ?? 30);

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

function calibration(all: CalibrationCase[], ranging: { rangePriorExponent?: number } = {}, label = 'all cases'): void {
  const results: { c: CalibrationCase; r: HorizonResult[] }[] = [];
  const t0 = performance.now();
  const perCase: number[] = [];
  for (const c of all) {
    const tc = performance.now();
    results.push({ c, r: evaluateCase(c, { members: 1000, seed: 1, ranging }) });
    perCase.push(performance.now() - tc);
  }
  console.log(`estimated ${all.length} cases in ${((performance.now() - t0) / 1000).toFixed(1)} s: per case (estimate + 6-row ephemeris) median ${quantile(perCase, 0.5).toFixed(0)} ms, p90 ${quantile(perCase, 0.9).toFixed(0)} ms, max ${Math.max(...perCase).toFixed(0)} ms`);
  table(label, results.map((x) => x.r));
  table(`${label}: close approachers (0.002-0.1 au)`, results.filter((x) => x.c.kind === 'close').map((x) => x.r));
  table(`${label}: ordinary`, results.filter((x) => x.c.kind === 'ordinary').map((x) => x.r));
  const misses = results.flatMap((x) => x.r.filter((h) => h.sigmaDistance > 3).map((h) => `${x.c.id}@+${h.hours}h d=${h.sigmaDistance.toFixed(1)}`));
  if (misses.length) console.log(`outside 3 sigma: ${misses.join(', ')}`);
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
  if (mode !== 'priors') calibration(all);
  if (mode === 'priors') for (const k of [-1, -0.5, 0, 0.5]) calibration(all, { rangePriorExponent: k }, `prior rho^${k}`);
}
