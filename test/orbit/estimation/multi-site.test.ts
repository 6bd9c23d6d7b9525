import { describe, expect, it } from 'vitest';
import { estimateObject } from '../../../src/orbit/estimation/index.js';
import { simulateNight } from '../../../src/planning/simulate.js';

describe('ephemeris for several sites at once', () => {
  it('gives the same rows as one call per site', () => {
    const now = new Date('2027-03-04T06:00:00Z');
    const [sim] = simulateNight({ now, count: 1, seed: 2 });
    const n = sim!.notice as { objectId: string; observer: { lat: number; lon: number; height: number }; observations: { t: string; ra: number; dec: number; sigma: number }[] };
    const estimate = estimateObject({
      objectId: n.objectId,
      observations: n.observations.map((o) => ({ t: o.t, raDeg: o.ra, decDeg: o.dec, sigmaArcsec: o.sigma, mag: null, band: null, observer: { latDeg: n.observer.lat, lonDeg: n.observer.lon, heightM: n.observer.height } })),
      now,
      members: 120,
      seed: 5,
    });
    const sites = [
      { latDeg: 34.21, lonDeg: -107.62, heightM: 2310 },
      { latDeg: 36.08, lonDeg: 138.24, heightM: 1420 },
    ];
    const times = [0, 3, 9, 20].map((h) => new Date(now.getTime() + h * 3600_000));
    const together = estimate.ephemerisForSites!(sites, times);
    sites.forEach((site, i) => {
      const alone = estimate.ephemeris(site, times);
      alone.forEach((row, k) => {
        const other = together[i]![k]!;
        expect(Math.abs(other.ra - row.ra) * 3600).toBeLessThan(1e-6);
        expect(Math.abs(other.dec - row.dec) * 3600).toBeLessThan(1e-6);
        expect(other.unc?.major).toBeCloseTo(row.unc!.major, 6);
      });
    });
  });
});
