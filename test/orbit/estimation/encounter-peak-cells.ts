import { encounterDensity } from '../../../src/orbit/estimation/ranging.js';

/**
 * Range-rate cells on which the encounter component's integral is checked
 * (encounter-peak.test.ts) and measured (test/bench/encounter-peak.bench.ts):
 * range rho (au), the line-of-sight offset d and transverse speed c of the
 * velocity relative to the Earth (au/day), and the cell's range-rate bounds.
 */
export const ENCOUNTER_PEAK_CELLS = [
  { name: 'a slow object 0.3 au away keeping pace with the Earth (a peak some 50 times narrower than the cell)', rho: 0.3, d: 0.000202, c: 0.00079, lo: -0.00185, hi: 0.00083 },
  { name: 'a fast approach 0.02 au away', rho: 0.02, d: 0.001, c: 0.004, lo: -0.01, hi: -0.005 },
  { name: 'a slow object 0.05 au away whose fast approaches enter the window again in the tails', rho: 0.05, d: -0.002, c: 0.0005, lo: -0.003, hi: 0.004 },
  { name: 'an object 1 au away', rho: 1, d: 0.0001, c: 0.002, lo: -0.004, hi: 0.004 },
  { name: 'an object 0.005 au away', rho: 0.005, d: 0.003, c: 0.01, lo: -0.02, hi: 0 },
] as const;

export type EncounterPeakCell = (typeof ENCOUNTER_PEAK_CELLS)[number];

/** The encounter density integrated over the cell by the midpoint rule in range-rate itself with n points (two million: the brute force). */
export function midpointInRate(cell: EncounterPeakCell, windowDays: number, n = 2_000_000): number {
  const width = (cell.hi - cell.lo) / n;
  let total = 0;
  for (let i = 0; i < n; i++) total += encounterDensity(cell.rho, cell.lo + (i + 0.5) * width, cell.d, cell.c, windowDays) * width;
  return total;
}
