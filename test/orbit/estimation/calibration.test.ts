import { describe, expect, it } from 'vitest';
import { REFERENCE_HORIZONS_H, REFERENCE_POPULATIONS, referenceCases } from '../../reference/cases.js';
import { ESTIMATOR_BAR, horizonFigures, median, rangeCoverage, scoreCase, type ScoredCase } from '../../reference/evaluate.js';

/**
 * A fast subset of the calibration against the independent reference
 * generator (test/reference/; the full set is
 * `npx tsx test/bench/reference-calibration.bench.ts`): the first four cases
 * of each population from seed 7001 (a seed range used for nothing else),
 * 1000 virtual orbits, scored from the follow-up and the survey site at
 * +1 ... +48 h. The bar of docs/accuracy.md, per population: truth inside
 * the 3-sigma ellipse, range inside the 5-95 % interval, V inside 3
 * magSigma, and the median 1-sigma major axis at most 3 times the median
 * error. With four cases the coverage bars mean every case.
 */
const FIRST_SEED = 7001;
const CASES_PER_POPULATION = 4;

describe.each(REFERENCE_POPULATIONS.map((p) => [p]))('calibration subset: %s', (population) => {
  const scored: ScoredCase[] = referenceCases(population, CASES_PER_POPULATION, FIRST_SEED).map((c) => scoreCase(c, { members: 1000, seed: 1 }));

  it(`uses ${CASES_PER_POPULATION} reference cases`, () => {
    expect(scored).toHaveLength(CASES_PER_POPULATION);
  });

  it.each(REFERENCE_HORIZONS_H.map((h) => [h]))('holds the truth inside the 3-sigma ellipse at +%i h from both sites', (hours) => {
    for (const s of scored) for (const h of s.horizons.filter((x) => x.hours === hours)) expect(h.sigmaDistance, `${s.id} ${h.site}`).toBeLessThanOrEqual(3);
  });

  it('holds the true range at the tracklet epoch inside the 5-95 % interval', () => {
    expect(rangeCoverage(scored)).toBeGreaterThanOrEqual(ESTIMATOR_BAR.rangeCoverage);
  });

  it.each(REFERENCE_HORIZONS_H.map((h) => [h]))('keeps the median 1-sigma major axis within 3 times the median error at +%i h', (hours) => {
    expect(horizonFigures(scored, hours).majorOverError).toBeLessThanOrEqual(ESTIMATOR_BAR.maxMajorOverError);
  });

  it('holds the true V inside 3 magSigma at every horizon', () => {
    for (const s of scored) for (const h of s.horizons) expect(h.magSigmas, `${s.id} +${h.hours} h`).toBeLessThanOrEqual(3);
  });

  it('samples the posterior with an effective sample size of at least a tenth of the proposals', () => {
    expect(Math.min(...scored.map((s) => s.effectiveSampleSize ?? 0))).toBeGreaterThan(200);
    expect(median(scored.map((s) => s.effectiveSampleSize ?? 0))).toBeGreaterThan(500);
  });
});
