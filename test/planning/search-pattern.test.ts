import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { searchPattern } from '../../src/planning/search-pattern.js';
import { angularSeparationDeg } from '../../src/sky/site.js';

const FIELD = 798; // the demo imager: 13.3 arcmin

describe('searchPattern', () => {
  it('is one pointing at the nominal position when the 3-sigma region fits the field', () => {
    const p = searchPattern({ raDeg: 150, decDeg: 20, majorArcsec: 100, minorArcsec: 30, paDeg: 40, fieldArcsec: FIELD });
    expect(p.pointings).toHaveLength(1);
    expect(p.pointings[0]!.offsetEastArcsec).toBe(0);
    expect(p.pointings[0]!.offsetNorthArcsec).toBe(0);
  });

  it('lays three fields along a region about 2.5 fields long and one wide', () => {
    // 3-sigma semi-major 1000 arcsec: 2000 arcsec long; stride 0.9 x 798 = 718 arcsec -> 3 tiles (2 x 718 + 798 = 2234 >= 2000).
    const p = searchPattern({ raDeg: 150, decDeg: 0, majorArcsec: 1000 / 3, minorArcsec: 20, paDeg: 90, fieldArcsec: FIELD });
    expect(p.pointings).toHaveLength(3);
    // Major axis at PA 90 (east): offsets all east-west, the nearest first.
    expect(p.pointings.map((q) => q.offsetEastArcsec)).toEqual([0, -718.2, 718.2]);
    expect(p.pointings.every((q) => q.offsetNorthArcsec === 0)).toBe(true);
  });

  it('covers every point of the 3-sigma ellipse with some field (property, tangent-plane geometry)', () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0, max: 359, noNaN: true }),
        fc.double({ min: -70, max: 70, noNaN: true }),
        fc.double({ min: 50, max: 700, noNaN: true }),
        fc.double({ min: 0.1, max: 1, noNaN: true }),
        fc.double({ min: 0, max: 180, noNaN: true }),
        fc.double({ min: 0, max: 2 * Math.PI, noNaN: true }),
        fc.double({ min: 0, max: 1, noNaN: true }),
        (ra, dec, major, ratio, pa, angle, radius) => {
          const p = searchPattern({ raDeg: ra, decDeg: dec, majorArcsec: major, minorArcsec: major * ratio, paDeg: pa, fieldArcsec: FIELD });
          // A point of the ellipse in its own axes, then on the sky (east, north).
          const u = 3 * major * radius * Math.cos(angle);
          const v = 3 * major * ratio * radius * Math.sin(angle);
          const t = (pa * Math.PI) / 180;
          const east = u * Math.sin(t) + v * Math.cos(t);
          const north = u * Math.cos(t) - v * Math.sin(t);
          // Inside a field: within half a field of its centre in the field's own (ellipse-aligned) axes, judged by offsets.
          const covered = p.pointings.some((q) => {
            const de = east - q.offsetEastArcsec;
            const dn = north - q.offsetNorthArcsec;
            const du = de * Math.sin(t) + dn * Math.cos(t);
            const dv = de * Math.cos(t) - dn * Math.sin(t);
            return Math.abs(du) <= FIELD / 2 + 0.1 && Math.abs(dv) <= FIELD / 2 + 0.1;
          });
          expect(covered).toBe(true);
          // The RA/Dec of each pointing lies at its stated offset: gnomonic, atan(rho) vs rho, under 0.2 arcsec for rho < 1 deg.
          for (const q of p.pointings) {
            const sepArcsec = angularSeparationDeg(ra, dec, q.raDeg, q.decDeg) * 3600;
            expect(Math.abs(sepArcsec - Math.hypot(q.offsetEastArcsec, q.offsetNorthArcsec))).toBeLessThan(0.2);
          }
        },
      ),
      { numRuns: 200 },
    );
  });

  it('refuses a non-finite axis, naming it', () => {
    expect(() => searchPattern({ raDeg: 1, decDeg: 1, majorArcsec: Number.NaN, minorArcsec: 1, paDeg: 0, fieldArcsec: FIELD })).toThrow(/majorArcsec/);
  });
});
