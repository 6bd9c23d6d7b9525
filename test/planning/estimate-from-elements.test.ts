import { describe, expect, it } from 'vitest';
import { ephemerisFromElements } from '../../src/orbit/ephemeris.js';
import { ttFromTtIso } from '../../src/orbit/time.js';
import { DEFAULT_ASSUMED_UNCERTAINTY, estimateFromElements } from '../../src/planning/estimate-from-elements.js';
import { PlanningInputError } from '../../src/planning/errors.js';

// Invented elements (an Apollo-type orbit) for the test.
const elements = { qAu: 0.95, e: 0.25, iDeg: 4, nodeDeg: 163, periDeg: 200, tpTt: ttFromTtIso('tp', '2027-02-20T06:00:00') };
const epochTt = ttFromTtIso('epoch', '2027-03-04T00:00:00');
const site = { latDeg: 34.21, lonDeg: -107.62, heightM: 2310 };
const times = [new Date('2027-03-05T03:00:00Z'), new Date('2027-03-05T09:00:00Z')];

describe('estimateFromElements', () => {
  const estimate = estimateFromElements({ objectId: 'TE27E01', firstObservedAt: '2027-03-05T01:00:00Z', elements, epochTt, hMag: 24.5, g: 0.2 });

  it('gives the orbit module ephemeris for the elements, row for row', () => {
    const mine = estimate.ephemeris(site, times);
    const direct = ephemerisFromElements(elements, epochTt, site, times, { photometry: { hMag: 24.5, g: 0.2 } });
    mine.forEach((row, k) => {
      expect(row.ra).toBe(direct[k]!.ra);
      expect(row.dec).toBe(direct[k]!.dec);
      expect(row.mag).toBe(direct[k]!.mag);
    });
  });

  it('grows the stated 1-sigma uncertainty linearly from the reference time (2 h and 8 h after it)', () => {
    const [early, late] = estimate.ephemeris(site, times);
    const u = DEFAULT_ASSUMED_UNCERTAINTY;
    expect(early!.unc!.major).toBeCloseTo(u.majorArcsec + 2 * u.growthArcsecPerH, 9);
    expect(late!.unc!.major).toBeCloseTo(u.majorArcsec + 8 * u.growthArcsecPerH, 9);
    expect(late!.unc!.minor).toBeCloseTo(u.axisRatio * late!.unc!.major, 9);
    expect(early!.magSigma).toBe(u.magSigma);
  });

  it('lays the ellipse along the motion', () => {
    const [row] = estimate.ephemeris(site, times);
    const motionPa = ((Math.atan2(row!.raRate, row!.decRate) * 180) / Math.PI + 360) % 180;
    expect(row!.unc!.pa).toBeCloseTo(motionPa, 9);
  });

  it('classes q < 1.3 au as near-Earth and gives the diameter range for albedo 0.25 to 0.05', () => {
    expect(estimate.summary.classFractions).toEqual({ neo: 1, mainBelt: 0, other: 0 });
    // D = 1329 km / sqrt(p) x 10^(-H/5) (Pravec & Harris 2007): H 24.5 -> 33.46 m (p 0.25) to 74.82 m (p 0.05), by hand.
    expect(estimate.summary.diameterM!.min).toBeCloseTo(33.46, 1);
    expect(estimate.summary.diameterM!.max).toBeCloseTo(74.82, 1);
    expect(estimate.summary.method).toBe('orbit-block');
  });

  it('refuses a discovery time that is not ISO UTC, naming the field', () => {
    expect(() => estimateFromElements({ objectId: 'X', firstObservedAt: 'yesterday', elements, epochTt, hMag: null })).toThrow(PlanningInputError);
    expect(() => estimateFromElements({ objectId: 'X', firstObservedAt: 'yesterday', elements, epochTt, hMag: null })).toThrow(/firstObservedAt/);
  });
});
