/**
 * The encounter component's mass in a range-rate cell: the midpoint rule in
 * w = asinh(radial / h) that the estimator uses (encounterRateIntegral, 16
 * points) and the four-point midpoint rule in range-rate it replaced, each
 * against a brute-force midpoint rule in range-rate with two million points,
 * on the five cells of test/orbit/estimation/encounter-peak-cells.ts.
 * Run: npx tsx test/bench/encounter-peak.bench.ts
 */
import { encounterRateIntegral } from '../../src/orbit/estimation/ranging.js';
import { ENCOUNTER_PEAK_CELLS, midpointInRate } from '../orbit/estimation/encounter-peak-cells.js';

const WINDOW_DAYS = 10;
const pct = (x: number): string => `${x >= 0 ? '+' : ''}${(100 * x).toFixed(1)} %`;
for (const cell of ENCOUNTER_PEAK_CELLS) {
  const exact = midpointInRate(cell, WINDOW_DAYS);
  const inW = encounterRateIntegral(cell.rho, cell.lo, cell.hi, cell.d, cell.c, WINDOW_DAYS) / exact - 1;
  const fourPoints = midpointInRate(cell, WINDOW_DAYS, 4) / exact - 1;
  console.log(`${cell.name}: asinh rule (16 points) ${pct(inW)}, four points in range-rate ${pct(fourPoints)}`);
}
