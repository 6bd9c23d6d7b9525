import { describe, expect, it } from 'vitest';
import { lightCurveCadence, SPIN_BARRIER_S, spinPeriodRange } from '../../src/photometry/cadence.js';

describe('plausible spin range from size (Pravec & Harris 2000)', () => {
  it('starts at the 2.2-h spin barrier for bodies larger than 200 m', () => {
    const spin = spinPeriodRange(300, 700);
    expect(spin.minPeriodS).toBe(2.2 * 3600);
    expect(spin.maxPeriodS).toBe(24 * 3600);
  });

  it('allows periods of seconds for decametre bodies and plans them up to the barrier', () => {
    const spin = spinPeriodRange(20, 50);
    expect(spin.minPeriodS).toBe(10);
    expect(spin.maxPeriodS).toBe(SPIN_BARRIER_S);
  });

  it('takes the fast end from the smallest size and the slow end from the largest', () => {
    const spin = spinPeriodRange(120, 300);
    expect(spin.minPeriodS).toBe(120);
    expect(spin.maxPeriodS).toBe(24 * 3600);
  });

  it('rejects a reversed range by name', () => {
    expect(() => spinPeriodRange(300, 100)).toThrow(/diameterMinM = 300.*must not exceed/);
  });
});

describe('light-curve cadence (common practice)', () => {
  it('caps the exposure at a tenth of the shortest period and adds readout and overhead', () => {
    const cadence = lightCurveCadence(spinPeriodRange(20, 50), 0.8, 10, 5, 36_000);
    expect(cadence.maxExposureS).toBe(1);
    expect(cadence.cadenceS).toBeCloseTo(15.8, 12);
  });

  it('covers two cycles of the longest period when the window allows', () => {
    const cadence = lightCurveCadence(spinPeriodRange(20, 50), 1, 10, 5, 36_000);
    expect(cadence.sequenceS).toBe(2 * SPIN_BARRIER_S);
    expect(cadence.count).toBe(Math.floor((2 * SPIN_BARRIER_S) / 16));
  });

  it('stops at the window when it is shorter', () => {
    const cadence = lightCurveCadence(spinPeriodRange(300, 700), 60, 10, 5, 3600);
    expect(cadence.sequenceS).toBe(3600);
    expect(cadence.count).toBe(48);
  });
});
