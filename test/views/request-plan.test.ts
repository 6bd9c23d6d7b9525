import { describe, expect, it } from 'vitest';
import { planFacts, rowAt, type PlanRow } from '../../src/views/request-plan.js';

const row = (t: string, ra: number, dec: number, pa = 40): PlanRow => ({
  t,
  ra,
  dec,
  raRate: 0.1,
  decRate: -0.2,
  unc: { major: 6, minor: 2, pa },
  mag: 18,
  alt: 40,
  airmass: 1.5,
});

describe('reading a request plan', () => {
  it('returns the table row itself at a table time', () => {
    const rows = [row('2027-03-04T06:00:00.000Z', 150, 20), row('2027-03-04T06:05:00.000Z', 150.01, 20.02)];
    expect(rowAt(rows, new Date('2027-03-04T06:05:00Z'))).toBe(rows[1]);
  });

  it('interpolates linearly between rows (midpoint is the mean)', () => {
    const rows = [row('2027-03-04T06:00:00.000Z', 150, 20), row('2027-03-04T06:05:00.000Z', 150.01, 20.02)];
    const mid = rowAt(rows, new Date('2027-03-04T06:02:30Z'))!;
    expect(mid.ra).toBeCloseTo(150.005, 9);
    expect(mid.dec).toBeCloseTo(20.01, 9);
  });

  it('takes RA across 0/360 and the position angle across 0/180 the short way', () => {
    const rows = [row('2027-03-04T06:00:00.000Z', 359.99, 0, 178), row('2027-03-04T06:05:00.000Z', 0.01, 0, 2)];
    const mid = rowAt(rows, new Date('2027-03-04T06:02:30Z'))!;
    expect(Math.min(mid.ra, 360 - mid.ra)).toBeCloseTo(0, 9);
    expect(Math.min(mid.unc!.pa, 180 - mid.unc!.pa)).toBeCloseTo(0, 9);
  });

  it('has no row outside the table', () => {
    const rows = [row('2027-03-04T06:00:00.000Z', 150, 20), row('2027-03-04T06:05:00.000Z', 150.01, 20.02)];
    expect(rowAt(rows, new Date('2027-03-04T06:05:01Z'))).toBeNull();
    expect(rowAt(rows, new Date('2027-03-04T05:59:59Z'))).toBeNull();
  });

  it('reads nothing from a plan without a table rather than failing', () => {
    expect(planFacts({ exposures: [] })).toEqual({
      rows: [],
      vMag: null,
      raRate: null,
      decRate: null,
      slitArcsec: null,
      raDeg: null,
      decDeg: null,
      uncertainty: null,
      durationS: null,
      closesBecause: null,
      atStart: null,
      searchPattern: null,
    });
    expect(planFacts('not an object').rows).toEqual([]);
  });

  it('reads the rest of a plan it can, when one part is malformed', () => {
    const facts = planFacts({ expectedDurationS: 'long', target: { raDeg: 150.2, decDeg: 22.1, vMag: 17.6, uncertainty1Sigma: { majorArcsec: 6, minorArcsec: 2, paDeg: 40 } } });
    expect(facts.durationS).toBeNull();
    expect(facts.raDeg).toBe(150.2);
    expect(facts.uncertainty).toEqual({ major: 6, minor: 2, pa: 40 });
  });
});
