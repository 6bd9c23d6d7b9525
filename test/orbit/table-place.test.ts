import { describe, expect, it } from 'vitest';
import { ephemerisFromState } from '../../src/orbit/ephemeris.js';
import { offsetArcsec } from '../../src/orbit/estimation/sky-spread.js';
import { placeFromTable, sigmaDistance, type TableRowLike } from '../../src/orbit/table-place.js';
import { inventState } from '../../src/planning/simulate.js';

const T0 = new Date('2027-01-10T20:00:00Z');
const site = { latDeg: 50, lonDeg: 10, heightM: 500 };
// An invented fast close approacher: 0.01 au away, 12 km/s across the line of sight (about 17 arcsec/min).
const state = inventState({ timeUtc: T0, raDeg: 110, decDeg: 40, distanceAu: 0.01, radialKmPerS: -3, transverseKmPerS: 12, motionPaDeg: 60 });
const times = (startMin: number, stepMin: number, n: number) => Array.from({ length: n }, (_, k) => new Date(T0.getTime() + (startMin + k * stepMin) * 60_000));

/** A request's table as the planner writes it: rows every 5 min, rounded like the plan (1e-6 deg, 1e-4 arcsec/s). */
function table(): TableRowLike[] {
  return ephemerisFromState(state, site, times(0, 5, 13)).map((r) => ({
    t: r.t,
    ra: Number(r.ra.toFixed(6)),
    dec: Number(r.dec.toFixed(6)),
    raRate: Number(r.raRate.toFixed(4)),
    decRate: Number(r.decRate.toFixed(4)),
    unc: { major: 3, minor: 1, pa: 90 },
  }));
}

describe('a place between the rows of a request table', () => {
  it('matches the orbit module evaluated at that time within 0.01 arcsec, as docs claim, checked at 0.02 (Hermite on positions and rates)', () => {
    const rows = table();
    for (const t of times(1.7, 7.3, 8)) {
      const place = placeFromTable(rows, t.getTime(), 900)!;
      const exact = ephemerisFromState(state, site, [t])[0]!;
      const [east, north] = offsetArcsec(place.reference.ra, place.reference.dec, exact.ra, exact.dec);
      expect(Math.hypot(east - place.eastArcsec, north - place.northArcsec)).toBeLessThan(0.02);
    }
  });

  it('extrapolates from an end row by its rates within the allowed time, and gives nothing beyond', () => {
    const rows = table();
    const after = Date.parse(rows[rows.length - 1]!.t) + 120_000;
    const place = placeFromTable(rows, after, 600)!;
    expect(place.eastArcsec).toBeCloseTo(rows[rows.length - 1]!.raRate * 120, 9);
    expect(placeFromTable(rows, after, 60)).toBeNull();
  });
});

describe('the distance of a measured position from the prediction', () => {
  // Worked by hand: a 3" x 1" ellipse along east-west and a 4" measurement sigma combine to 5" x 4.12"; 5" east is 1 sigma.
  it('adds the measurement sigma to both axes of the predicted ellipse', () => {
    const reference: TableRowLike = { t: T0.toISOString(), ra: 120, dec: 0, raRate: 0, decRate: 0, unc: { major: 3, minor: 1, pa: 90 } };
    const place = { reference, eastArcsec: 0, northArcsec: 0, unc: reference.unc };
    expect(sigmaDistance(place, { raDeg: 120 + 5 / 3600, decDeg: 0, sigmaArcsec: 4 })).toBeCloseTo(1, 4);
    expect(sigmaDistance(place, { raDeg: 120, decDeg: 5 / 3600, sigmaArcsec: 4 })).toBeCloseTo(5 / Math.sqrt(17), 4);
  });
});
