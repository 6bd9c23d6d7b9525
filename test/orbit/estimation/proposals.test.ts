import { describe, expect, it } from 'vitest';
import { estimateObject } from '../../../src/orbit/estimation/estimate.js';
import { loadFixture } from '../../reference/fixture.js';
import { trackletOf } from './reference-scorer.js';

/** The sampling inside the ranging cells draws its virtual orbits from a number of proposals a caller may raise (a first look does). */
describe('proposals of the sampling inside the ranging cells', () => {
  const c = loadFixture().find((x) => x.population === 'ordinary')!;
  const estimate = (ranging: { proposals?: number }) =>
    estimateObject({ objectId: c.id, observations: trackletOf(c), now: new Date(c.lastObservationMs), members: 100, seed: 1, ranging });

  it('are two per virtual orbit by default', () => {
    expect(estimate({}).summary.notes.join(' ')).toContain('200 proposals');
  });

  it('are as many as asked when that is more', () => {
    expect(estimate({ proposals: 1000 }).summary.notes.join(' ')).toContain('1000 proposals');
  });

  it('refuses a count that is not a whole number, naming the option', () => {
    expect(() => estimate({ proposals: 1.5 })).toThrow(/ranging\.proposals/);
  });
});
