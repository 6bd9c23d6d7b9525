import { describe, expect, it } from 'vitest';
import { estimateObject } from '../../../src/orbit/estimation/estimate.js';
import { ENCOUNTER_WINDOW_DAYS, type RangingOptions } from '../../../src/orbit/estimation/ranging.js';
import { loadFixture } from '../../reference/fixture.js';
import { trackletOf } from './reference-scorer.js';

/** The encounter component of the default prior allows the closest approach within a window of days either side of the tracklet. */
describe('the encounter window of the range prior', () => {
  const c = loadFixture().find((x) => x.id === 'slow-7002')!;
  const estimate = (ranging: RangingOptions) =>
    estimateObject({ objectId: c.id, observations: trackletOf(c), now: new Date(c.lastObservationMs), members: 200, seed: 1, ranging });

  it('is ENCOUNTER_WINDOW_DAYS either side when not given', () => {
    expect(estimate({}).summary.rangeAu).toEqual(estimate({ encounterWindowDays: ENCOUNTER_WINDOW_DAYS }).summary.rangeAu);
    expect(estimate({}).summary.rangeAu).not.toEqual(estimate({ encounterWindowDays: 3 }).summary.rangeAu);
  });

  it('refuses a window that is not a positive number of days, naming the option', () => {
    expect(() => estimate({ encounterWindowDays: 0 })).toThrow(/ranging\.encounterWindowDays/);
    expect(() => estimate({ encounterWindowDays: Number.NaN })).toThrow(/ranging\.encounterWindowDays/);
  });
});
