/**
 * The encounter component's mass in a range-rate cell: the midpoint rule in
 * w = asinh(radial / h) that the estimator uses (encounterRateIntegral, 16
 * points) and the four-point midpoint rule in range-rate it replaced, each
 * against a brute-force midpoint rule in range-rate with two million points,
 * on the five cells of test/orbit/estimation/encounter-peak.test.ts.
 * Run: npx tsx test/bench/encounter-peak.bench.ts
 */
import { encounterDensity, encounterRateIntegral } from '../../src/orbit/estimation/ranging.js';

const WINDOW_DAYS = 10;
const cells = [
  { name: 'slow, 0.3 au', rho: 0.3, d: 0.000202, c: 0.00079, lo: -0.00185, hi: 0.00083 },
  { name: 'fast, 0.02 au', rho: 0.02, d: 0.001, c: 0.004, lo: -0.01, hi: -0.005 },
  { name: 'slow, 0.05 au', rho: 0.05, d: -0.002, c: 0.0005, lo: -0.003, hi: 0.004 },
  { name: '1 au', rho: 1, d: 0.0001, c: 0.002, lo: -0.004, hi: 0.004 },
  { name: '0.005 au', rho: 0.005, d: 0.003, c: 0.01, lo: -0.02, hi: 0 },
];

/** Midpoint rule in range-rate (au/day) with n points. */
function midpoint(cell: (typeof cells)[number], n: number): number {
  const width = (cell.hi - cell.lo) / n;
  let total = 0;
  for (let i = 0; i < n; i++) total += encounterDensity(cell.rho, cell.lo + (i + 0.5) * width, cell.d, cell.c, WINDOW_DAYS) * width;
  return total;
}

const pct = (x: number): string => `${x >= 0 ? '+' : ''}${(100 * x).toFixed(1)} %`;
for (const cell of cells) {
  const exact = midpoint(cell, 2_000_000);
  const inW = encounterRateIntegral(cell.rho, cell.lo, cell.hi, cell.d, cell.c, WINDOW_DAYS) / exact - 1;
  const fourPoints = midpoint(cell, 4) / exact - 1;
  console.log(`${cell.name}: asinh rule (16 points) ${pct(inW)}, four points in range-rate ${pct(fourPoints)}`);
}
