/**
 * Where a short-arc estimate could go wrong, measured on reference cases (test/reference/).
 * Run: npx tsx test/bench/ranging-diagnostics.bench.ts [cases per population] [first seed]   (default 20, 5001)
 * Prints per population:
 *   - the truth's chi-square in the estimator's model (its reference state placed by the project),
 *     against the 2n values it is measured with (median ratio, and the share above the 99 % point);
 *   - how many correct positions the attributable's leave-one-out test would flag (a line or parabola
 *     on the sky), and how many the estimate flags judging by orbits;
 *   - whether the truth's (range, range-rate) lies inside a cell of the ranging's final pass;
 *   - Gauss-Newton convergence: the median range and the least chi-square with 3 against 8
 *     evaluations per node.
 */
import { fitAttributable } from '../../src/orbit/estimation/attributable.js';
import { chiSquareAt999 } from '../../src/orbit/estimation/estimate.js';
import { prepareObservations } from '../../src/orbit/estimation/observations.js';
import { systematicRanging, type RangingResult } from '../../src/orbit/estimation/ranging.js';
import { REFERENCE_POPULATIONS, referenceCases } from '../reference/cases.js';
import { rangeAndRateOf, runEstimate, trackletChiSquareOf, trackletOf, truthStateAt } from '../orbit/estimation/reference-scorer.js';

const perPopulation = Number(process.argv[2] ?? 20);
const firstSeed = Number(process.argv[3] ?? 5001);
const quantile = (xs: number[], q: number) => {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.round(q * (s.length - 1))]!;
};
/** Chi-square 99 % points for 2n = 6 ... 12 degrees of freedom (Abramowitz & Stegun table 26.8). */
const CHI2_99: Record<number, number> = { 6: 16.81, 8: 20.09, 10: 23.21, 12: 26.22 };
const medianRange = (r: RangingResult): number => {
  const nodes = [...r.nodes].sort((a, b) => a.rangeAu - b.rangeAu);
  let acc = 0;
  for (const n of nodes) if ((acc += n.weight) >= 0.5) return n.rangeAu;
  return nodes[nodes.length - 1]!.rangeAu;
};

for (const population of REFERENCE_POPULATIONS) {
  const cases = referenceCases(population, perPopulation, firstSeed);
  const chiRatios: number[] = [];
  let chiHigh = 0, lineFlags = 0, lineCases = 0, orbitFlags = 0, inside = 0;
  const rangeShifts: number[] = [], chiDrops: number[] = [];
  for (const c of cases) {
    const tracklet = trackletOf(c);
    const observations = prepareObservations(tracklet);
    const attributable = fitAttributable(observations, { leaveOneOut: false });
    const truth = truthStateAt(c, attributable.epochMs);
    const chi = trackletChiSquareOf(c, truth);
    chiRatios.push(chi / (2 * tracklet.length));
    if (chi > (CHI2_99[2 * tracklet.length] ?? chiSquareAt999(2 * tracklet.length))) chiHigh++;
    const flaggedByLine = fitAttributable(observations).used.filter((u) => !u).length;
    lineFlags += flaggedByLine;
    if (flaggedByLine > 0) lineCases++;
    orbitFlags += runEstimate(c, { members: 200 }).summary.residuals.filter((r) => r.outlier).length;
    const { rho, rate: rhoDot } = rangeAndRateOf(c, attributable.epochMs)(truth);
    const r3 = systematicRanging(observations, attributable);
    const r8 = systematicRanging(observations, attributable, { evaluations: 8 });
    if (r3.nodes.some((n) => Math.abs(Math.log(rho / n.rangeAu)) <= n.logRangeWidth / 2 && Math.abs(rhoDot - n.rangeRateAuPerDay) <= n.rateWidth / 2)) inside++;
    rangeShifts.push(Math.abs(Math.log(medianRange(r8) / medianRange(r3))));
    chiDrops.push(r3.minChiSquare - r8.minChiSquare);
  }
  console.log(
    `${population} (${cases.length} cases from seed ${firstSeed}): truth's chi-square / 2n median ${quantile(chiRatios, 0.5).toFixed(2)}, above the 99 % point in ${chiHigh}; ` +
      `positions flagged by the line-on-the-sky test ${lineFlags} in ${lineCases} cases, by orbits ${orbitFlags}; ` +
      `truth inside a final-pass cell ${inside}/${cases.length}; 3 vs 8 Gauss-Newton evaluations: |ln median-range ratio| max ${Math.max(...rangeShifts).toFixed(4)}, least chi-square lowered by at most ${Math.max(...chiDrops).toFixed(3)}`,
  );
}
