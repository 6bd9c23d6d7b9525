/**
 * Why a reference case falls outside its 3-sigma region: the data's verdict on the truth against
 * the estimate's best orbit, and where the truth's range and range rate sit in the virtual orbits.
 * Run: npx tsx test/bench/miss-diagnostics.bench.ts <population>-<seed> ...   (e.g. encounter-41036)
 * Prints per case: the truth's chi-square against the tracklet in the estimator's model (its
 * reference state placed by the project) and the least chi-square of the ranging (their difference
 * is the data's penalty on the truth, two free parameters: range and range rate); the truth's range
 * quantile among the virtual orbits; and, among the virtual orbits within 10 % of the truth's
 * range, the 5-50-95 % range rate and the truth's quantile in it.
 */
import { fitAttributable } from '../../src/orbit/estimation/attributable.js';
import { prepareObservations } from '../../src/orbit/estimation/observations.js';
import { REFERENCE_POPULATIONS, referenceCase, type ReferencePopulation } from '../reference/cases.js';
import { rangeAndRateOf, runEstimate, trackletChiSquareOf, trackletOf, truthStateAt } from '../orbit/estimation/reference-scorer.js';

for (const id of process.argv.slice(2)) {
  const [population, seedText] = id.split('-') as [ReferencePopulation, string];
  const seed = Number(seedText);
  if (!REFERENCE_POPULATIONS.includes(population) || !Number.isInteger(seed)) throw new Error(`${id}: expected <population>-<seed>, population one of ${REFERENCE_POPULATIONS.join(', ')}`);
  const c = referenceCase(population, seed);
  if (c === null) { console.log(`${id}: no case for this seed`); continue; }
  const tracklet = trackletOf(c);
  const attributable = fitAttributable(prepareObservations(tracklet), { leaveOneOut: false });
  const state = truthStateAt(c, attributable.epochMs);
  const chi = trackletChiSquareOf(c, state);
  const rangeAndRate = rangeAndRateOf(c, attributable.epochMs);
  const t = rangeAndRate(state);
  const estimate = runEstimate(c);
  const members = estimate.virtualOrbits.map(rangeAndRate);
  const rangeQuantile = members.filter((m) => m.rho < t.rho).length / members.length;
  const rates = members.filter((m) => Math.abs(Math.log(m.rho / t.rho)) < 0.1).map((m) => m.rate).sort((a, b) => a - b);
  const at = (q: number) => rates[Math.floor(q * (rates.length - 1))]!.toFixed(5);
  console.log(
    `${id} (${c.description}): truth chi-square ${chi.toFixed(1)} for ${2 * tracklet.length} values, least of the ranging ${estimate.ranging?.minChiSquare.toFixed(1) ?? '-'}; ` +
      `truth range ${t.rho.toFixed(4)} au at quantile ${rangeQuantile.toFixed(2)}, range rate ${t.rate.toFixed(5)} au/day; ` +
      (rates.length > 0 ? `${rates.length} virtual orbits within 10 % of that range: range rate 5/50/95 % ${at(0.05)} ${at(0.5)} ${at(0.95)} au/day, truth's quantile ${(rates.filter((r) => r < t.rate).length / rates.length).toFixed(2)}` : 'no virtual orbit within 10 % of that range'),
  );
}
