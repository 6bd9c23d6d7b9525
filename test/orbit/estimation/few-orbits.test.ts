import { describe, expect, it } from 'vitest';
import { estimateObject, FEW_ORBITS_BELOW } from '../../../src/orbit/estimation/estimate.js';
import type { TrackletObservation } from '../../../src/domain/tracklet.js';

/**
 * A self-contradictory tracklet (the demo close approacher's first three
 * positions, 15 min apart, and its fourth dated three days later): whatever
 * orbit is kept, the weight rests on a handful of proposals, and the notes
 * must say so rather than present a tiny region as certain.
 */
describe('an estimate whose weight rests on a few orbits', () => {
  const observer = { latDeg: 32.87, lonDeg: -105.48, heightM: 2790 };
  const at = (t: string, raDeg: number, decDeg: number): TrackletObservation => ({ t, raDeg, decDeg, sigmaArcsec: 0.3, mag: 15.9, band: 'V', observer });
  const observations = [
    at('2026-11-30T06:08:12.492Z', 83.775734, 16.782438),
    at('2026-11-30T06:23:12.492Z', 83.586228, 17.041333),
    at('2026-11-30T06:38:12.492Z', 83.3944, 17.30116),
    at('2026-12-03T06:53:12.492Z', 83.20095, 17.562107),
  ];

  it(`warns in its notes when the effective sample size is below ${FEW_ORBITS_BELOW}`, () => {
    const estimate = estimateObject({ objectId: 'contradictory', observations, now: new Date('2026-12-03T07:00:00Z'), members: 1000, seed: 1 });
    expect(estimate.ranging!.effectiveSampleSize).toBeLessThan(FEW_ORBITS_BELOW);
    expect(estimate.summary.notes.join(' ')).toMatch(/only about \d+ distinct orbits carry the virtual orbits' weight/);
  }, 60_000);
});
