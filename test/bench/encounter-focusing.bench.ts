/**
 * How much the Earth's gravity would raise the encounter component's density at the reference
 * truths, which that component leaves out (it treats encounters as straight lines).
 * Run: npx tsx test/bench/encounter-focusing.bench.ts [sets]   (default the pool: 40@1,40@11001,100@21001,80@31001,60@41001)
 * Method: phase-space density is constant along a trajectory (Liouville's theorem, e.g. Binney &
 * Tremaine 2008, Galactic Dynamics, ch. 4; chapter from memory), so a density set far from the Earth as 1 / (b^2 v^4)
 * reads 1 / (L^2 v_inf^2) near it, L the angular momentum about the Earth; the straight-line model
 * reads 1 / (L^2 v^2). The factor is v^2 / v_inf^2 = v^2 / (v^2 - 2 GM / r) (vis-viva, the two-body
 * energy integral, e.g. Vallado 2013, Fundamentals of Astrodynamics and Applications, ch. 1), with r and v the truth's geocentric distance and speed at the tracklet's mean epoch,
 * taken from the reference generator alone.
 */
import { referenceTruthStates, type ReferencePopulation } from '../reference/cases.js';
import { ttDaysOfUtc } from '../reference/reference-time.js';
import { seedOfCase } from '../reference/sky-geometry.js';
import { earthState, KM_PER_AU, sunState } from '../reference/solar-system.js';
import { cachedReferenceCases, caseSetsOf } from './reference-case-cache.js';

/** The Earth's GM, au^3/day^2 (398 600.4418 km^3/s^2, IERS Conventions 2010). */
const GM_EARTH_AU3_DAY2 = (398_600.4418 * 86_400 ** 2) / KM_PER_AU ** 3;
const sets = caseSetsOf(process.argv[2] ?? '40@1,40@11001,100@21001,80@31001,60@41001');

for (const population of ['encounter', 'slow'] as ReferencePopulation[]) {
  const factors: number[] = [];
  for (const [count, seed] of sets) {
    for (const c of cachedReferenceCases(population, count, seed)) {
      const tt = ttDaysOfUtc(c.meanEpochMs);
      const [s] = referenceTruthStates(population, seedOfCase(c), [tt]);
      const earth = earthState(tt), sun = sunState(tt);
      const r = Math.hypot(...[0, 1, 2].map((k) => s![k]! - (earth.r[k]! - sun.r[k]!)));
      const v2 = [3, 4, 5].reduce((sum, k) => sum + (s![k]! - (earth.v[k - 3]! - sun.v[k - 3]!)) ** 2, 0);
      factors.push(v2 / (v2 - (2 * GM_EARTH_AU3_DAY2) / r));
    }
  }
  factors.sort((a, b) => a - b);
  const at = (p: number): string => factors[Math.floor(p * (factors.length - 1))]!.toFixed(3);
  console.log(`${population}, ${factors.length} cases: density factor v^2 / v_inf^2 at the mean epoch: p10 ${at(0.1)}, median ${at(0.5)}, p90 ${at(0.9)}, max ${at(1)}`);
}
