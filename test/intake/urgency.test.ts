import { AngleBetween, VectorFromSphere, Spherical, MakeTime } from 'astronomy-engine';
import { describe, expect, it } from 'vitest';
import { MIN_ALLOWANCE_S, NEW_DATA_ALLOWANCE_S, newDataAllowanceS, trackletRateDegPerDay } from '../../src/intake/urgency.js';

/** The same arc from astronomy-engine's vector angle (independent of the haversine in the module). */
function referenceArcDeg(a: { raDeg: number; decDeg: number }, b: { raDeg: number; decDeg: number }): number {
  const time = MakeTime(new Date('2027-03-04T00:00:00Z'));
  return AngleBetween(VectorFromSphere(new Spherical(a.decDeg, a.raDeg, 1), time), VectorFromSphere(new Spherical(b.decDeg, b.raDeg, 1), time));
}

describe('new-data urgency', () => {
  it('measures a tracklet rate as the great-circle arc over the time, as astronomy-engine measures the arc', () => {
    const first = { t: '2027-03-04T04:00:00Z', raDeg: 359.8, decDeg: 62.5 };
    const last = { t: '2027-03-04T06:00:00Z', raDeg: 1.3, decDeg: 63.1 };
    const arc = referenceArcDeg(first, last);
    // Two hours: the rate is the arc times 12 per day (tolerance: 1e-9 deg/day, rounding only).
    expect(trackletRateDegPerDay([last, first])).toBeCloseTo(arc * 12, 9);
  });

  it('has no rate for a single position or positions at one time', () => {
    expect(trackletRateDegPerDay([{ t: '2027-03-04T04:00:00Z', raDeg: 10, decDeg: 0 }])).toBeNull();
    expect(trackletRateDegPerDay([{ t: '2027-03-04T04:00:00Z', raDeg: 10, decDeg: 0 }, { t: '2027-03-04T04:00:00Z', raDeg: 11, decDeg: 0 }])).toBeNull();
  });

  it('gives an ordinary mover the full allowance and a fast one a proportionally shorter one, never below the floor', () => {
    expect(newDataAllowanceS(null)).toBe(NEW_DATA_ALLOWANCE_S);
    expect(newDataAllowanceS(0.25)).toBe(NEW_DATA_ALLOWANCE_S);
    expect(newDataAllowanceS(10)).toBeCloseTo(NEW_DATA_ALLOWANCE_S / 10, 9);
    expect(newDataAllowanceS(1000)).toBe(MIN_ALLOWANCE_S);
  });
});
