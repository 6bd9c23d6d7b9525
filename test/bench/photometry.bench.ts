/**
 * Cost of the exposure plans, as the planner calls them (once per object, site,
 * window and request kind). Prints microseconds per call; not a test.
 * Run: npx tsx test/bench/photometry.bench.ts
 */
import { loadConfig } from '../../src/config/load.js';
import { planExposure } from '../../src/photometry/plans.js';
import type { RequestKind } from '../../src/domain/request-kind.js';

const site = loadConfig({ env: {} }).sites[0]!;
const kinds: RequestKind[] = ['photometry', 'colours', 'spectrum'];
const calls = 20_000;

for (const kind of kinds) {
  let feasible = 0;
  const start = process.hrtime.bigint();
  for (let i = 0; i < calls; i++) {
    const plan = planExposure(kind, site, {
      vMag: 15 + (i % 70) / 10,
      rateArcsecPerS: 0.01 + (i % 13) / 100,
      rateSigmaArcsecPerS: 0.0002 + (i % 7) / 5000,
      airmass: 1 + (i % 11) / 10,
      skyVMagPerArcsec2: 19 + (i % 5) / 2,
      diameterRangeM: { minM: 20 + (i % 50) * 10, maxM: 60 + (i % 50) * 25 },
    });
    if (plan.feasible) feasible++;
  }
  const us = Number(process.hrtime.bigint() - start) / 1e3 / calls;
  console.log(`${kind.padEnd(10)} ${us.toFixed(1)} us per plan (${calls} calls, ${feasible} feasible)`);
}
