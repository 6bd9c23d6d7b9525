import { describe, expect, it } from 'vitest';
import { DEFAULT_SCORE_WEIGHTS, scoreRequest, type ScoreInputs } from '../../src/planning/score.js';
import { PlanningInputError } from '../../src/planning/errors.js';

// The worked example of docs/scoring.md, computed there by hand.
const worked: ScoreInputs = {
  horizonH: 36,
  feasibleWindows: 2,
  hoursLeft: 30,
  hMag: 25,
  minDistanceLunar: 5,
  nearEarthFraction: 0.9,
  marginMag: 1.2,
  windowS: 7200,
  sequenceS: 1800,
  airmass: 1.4,
  maxAirmass: 2.4,
  hoursSinceDiscovery: 3,
};

const factor = (inputs: ScoreInputs, name: string) => scoreRequest(inputs).factors.find((f) => f.name === name)!;

describe('scoreRequest', () => {
  it('reproduces the worked example of docs/scoring.md: 69.7', () => {
    const score = scoreRequest(worked);
    expect(score.total).toBe(69.7);
    expect(score.factors.map((f) => [f.name, f.value])).toEqual([
      ['urgency', 0.333],
      ['value', 0.847],
      ['feasibility', 0.771],
      ['freshness', 1],
    ]);
    expect(score.factors.map((f) => f.weight)).toEqual([0.3, 0.3, 0.25, 0.15]);
  });

  it('reproduces the example 20 h after discovery: 65.4', () => {
    expect(scoreRequest({ ...worked, hoursSinceDiscovery: 20 }).total).toBe(65.4);
    expect(factor({ ...worked, hoursSinceDiscovery: 20 }, 'freshness').value).toBe(0.717);
  });

  it('is higher with fewer future windows, all else equal', () => {
    expect(scoreRequest({ ...worked, feasibleWindows: 1 }).total).toBeGreaterThan(scoreRequest(worked).total);
  });

  it('is higher when the observable future ends sooner', () => {
    expect(scoreRequest({ ...worked, hoursLeft: 5 }).total).toBeGreaterThan(scoreRequest(worked).total);
  });

  it('counts a small object (H > 22) more than a large one', () => {
    expect(factor({ ...worked, hMag: 23 }, 'value').value).toBeGreaterThan(factor({ ...worked, hMag: 19 }, 'value').value);
  });

  it('counts a closer approach more', () => {
    expect(factor({ ...worked, minDistanceLunar: 1 }, 'value').value).toBeGreaterThan(factor({ ...worked, minDistanceLunar: 30 }, 'value').value);
  });

  it('stays within 0-100 at the extremes', () => {
    const best = scoreRequest({ ...worked, feasibleWindows: 1, hoursLeft: 0, hMag: 30, minDistanceLunar: 0.1, nearEarthFraction: 1, marginMag: 5, airmass: 1, hoursSinceDiscovery: 0 });
    const worst = scoreRequest({ ...worked, feasibleWindows: 9, hoursLeft: 36, hMag: 10, minDistanceLunar: 1000, nearEarthFraction: 0, marginMag: 0, windowS: 100, sequenceS: 100_000, airmass: 2.4, hoursSinceDiscovery: 1000 });
    expect(best.total).toBe(100);
    expect(worst.total).toBeGreaterThanOrEqual(0);
    expect(worst.total).toBeLessThan(10);
  });

  it('takes configured weights, normalised by their sum', () => {
    const onlyUrgency = scoreRequest(worked, { ...DEFAULT_SCORE_WEIGHTS, urgency: 2, value: 0, feasibility: 0, freshness: 0 });
    expect(onlyUrgency.total).toBe(33.3);
    expect(onlyUrgency.factors[0]!.weight).toBe(1);
  });

  it('refuses a non-finite input, naming the field', () => {
    expect(() => scoreRequest({ ...worked, airmass: Number.NaN })).toThrow(PlanningInputError);
    expect(() => scoreRequest({ ...worked, airmass: Number.NaN })).toThrow(/airmass/);
  });

  it('refuses weights that are all zero', () => {
    expect(() => scoreRequest(worked, { ...DEFAULT_SCORE_WEIGHTS, urgency: 0, value: 0, feasibility: 0, freshness: 0 })).toThrow(/must not all be 0/);
  });
});
