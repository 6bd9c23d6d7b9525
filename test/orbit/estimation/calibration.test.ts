import { describe, expect, it } from 'vitest';
import { REFERENCE_HORIZONS_H, REFERENCE_POPULATIONS, referenceCase } from '../../reference/cases.js';
import { ESTIMATOR_BAR, horizonFigures, median, rangeCoverage, scoreCase, type ScoredCase } from './reference-scorer.js';
import { FIXTURE_CASES_PER_POPULATION, FIXTURE_FIRST_SEED, loadFixture } from '../../reference/fixture.js';

/**
 * A fast subset of the calibration against the independent reference
 * generator (test/reference/; the full set is
 * `npx tsx test/bench/reference-calibration.bench.ts`): the first ten cases
 * of each population from seed 7001 (test/reference/fixtures/, a seed range
 * used for nothing else), 1000 virtual orbits, scored from the follow-up and
 * the survey site at +1 ... +48 h.
 * The bar of docs/accuracy.md, per population. Where a figure is a fraction of
 * cases, ten cases measure it only to about +-10 %: the range interval is
 * asserted at the bar less two binomial standard deviations of a ten-case
 * sample (0.9 - 2 sqrt(0.9 x 0.1 / 10) = 0.71, so at least 8 of 10); the
 * 3-sigma and magnitude coverages, pooled over the 120 rows of a population,
 * at the bar itself.
 */
const fixture = loadFixture();
/** Each population's cases scored once (1000 virtual orbits, seed 1), for every test that reads them. */
const scoredCases = new Map<string, ScoredCase[]>();
const scoredOf = (population: string): ScoredCase[] => {
  let scored = scoredCases.get(population);
  if (scored === undefined) {
    scored = fixture.filter((c) => c.population === population).map((c) => scoreCase(c, { members: 1000, seed: 1 }));
    scoredCases.set(population, scored);
  }
  return scored;
};

it('keeps the fixture equal to what the reference generator gives for its first case', () => {
  const first = fixture[0]!;
  const [population, seed] = first.id.split('-') as [(typeof REFERENCE_POPULATIONS)[number], string];
  expect(Number(seed)).toBeGreaterThanOrEqual(FIXTURE_FIRST_SEED);
  // To 10 significant digits: astronomy-engine's nutation cache makes the last bits depend on the call history.
  const rounded = (c: unknown) => JSON.parse(JSON.stringify(c, (_k, v: unknown) => (typeof v === 'number' ? Number(v.toPrecision(10)) : v)));
  expect(rounded(referenceCase(population, Number(seed)))).toEqual(rounded(first));
});

describe.each(REFERENCE_POPULATIONS.map((p) => [p]))('calibration subset: %s', (population) => {
  const scored = scoredOf(population);
  const rows = scored.flatMap((s) => s.horizons);

  it(`uses ${FIXTURE_CASES_PER_POPULATION} reference cases`, () => {
    expect(scored).toHaveLength(FIXTURE_CASES_PER_POPULATION);
  });

  it('holds the truth inside the 3-sigma ellipse in at least 95 % of rows (six horizons, two sites)', () => {
    const misses = rows.filter((h) => !(h.sigmaDistance <= 3));
    expect(1 - misses.length / rows.length).toBeGreaterThanOrEqual(ESTIMATOR_BAR.inside3Sigma);
  });

  it('holds the true range at the tracklet epoch inside the 5-95 % interval in at least 8 of 10 cases', () => {
    expect(rangeCoverage(scored)).toBeGreaterThanOrEqual(0.8);
  });

  it.each(REFERENCE_HORIZONS_H.map((h) => [h]))('keeps the median 1-sigma major axis within 3 times the median error at +%i h', (hours) => {
    expect(horizonFigures(scored, hours).majorOverError).toBeLessThanOrEqual(ESTIMATOR_BAR.maxMajorOverError);
  });

  it('holds the true V inside 3 magSigma in at least 95 % of rows', () => {
    expect(rows.filter((h) => h.magSigmas !== null && h.magSigmas <= 3).length / rows.length).toBeGreaterThanOrEqual(ESTIMATOR_BAR.magInside3Sigma);
  });

  it('samples the posterior with an effective sample size of at least 20 and a median of at least 500 (of 2000 proposals)', () => {
    expect(Math.min(...scored.map((s) => s.effectiveSampleSize ?? 0))).toBeGreaterThanOrEqual(20);
    expect(median(scored.map((s) => s.effectiveSampleSize ?? 0))).toBeGreaterThan(500);
  });
});

/**
 * The bar's +24 h goal (nominal at most a third of linear extrapolation's
 * error) is out of reach for ordinary objects, whose sky paths over a day are
 * nearly straight: the positions' noise alone leaves 0.5-0.66 of linear's
 * error (test/reference/sky-geometry.ts, docs/accuracy.md).
 * What the estimator can do there is reach that floor.
 */
it('predicts ordinary objects at +24 h within 1.5 times the floor that the positions noise leaves', () => {
  const scored = scoredOf('ordinary');
  const f = horizonFigures(scored, 24);
  expect(f.medianErrorArcsec).toBeLessThanOrEqual(1.5 * f.medianFloorArcsec);
});
