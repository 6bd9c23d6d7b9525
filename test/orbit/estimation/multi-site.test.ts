import { describe, expect, it } from 'vitest';
import { estimateObject } from '../../../src/orbit/estimation/index.js';
import { simulateNight } from '../../../src/planning/simulate.js';

/** The estimate of one invented object from the night simulator (virtual-orbit seed 5). */
function simulatedEstimate(simSeed: number, members: number) {
  const now = new Date('2027-03-04T06:00:00Z');
  const [sim] = simulateNight({ now, count: 1, seed: simSeed });
  const n = sim!.notice as { objectId: string; observer: { lat: number; lon: number; height: number }; observations: { t: string; ra: number; dec: number; sigma: number }[] };
  const estimate = estimateObject({
    objectId: n.objectId,
    observations: n.observations.map((o) => ({ t: o.t, raDeg: o.ra, decDeg: o.dec, sigmaArcsec: o.sigma, mag: null, band: null, observer: { latDeg: n.observer.lat, lonDeg: n.observer.lon, heightM: n.observer.height } })),
    now,
    members,
    seed: 5,
  });
  return { now, estimate };
}

describe('ephemeris for several sites at once', () => {
  it('gives the same rows as one call per site', () => {
    const { now, estimate } = simulatedEstimate(2, 120);
    const sites = [
      { latDeg: 34.21, lonDeg: -107.62, heightM: 2310 },
      { latDeg: 36.08, lonDeg: 138.24, heightM: 1420 },
    ];
    const times = [0, 3, 9, 20].map((h) => new Date(now.getTime() + h * 3600_000));
    const together = estimate.ephemerisForSites(sites, times);
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

  it('with the ensemble at every third row only, keeps the nominal to 1 mas and the ellipse within 10 % of every-row values', () => {
    const { now, estimate } = simulatedEstimate(4, 200);
    const sites = [{ latDeg: 34.21, lonDeg: -107.62, heightM: 2310 }];
    const times = Array.from({ length: 37 }, (_, k) => new Date(now.getTime() + k * 20 * 60_000));
    const every = estimate.ephemerisForSites(sites, times)[0]!;
    const sparse = estimate.ephemerisForSites(sites, times, { spreadEvery: 3 })[0]!;
    every.forEach((row, k) => {
      const other = sparse[k]!;
      expect(Math.hypot((other.ra - row.ra) * Math.cos((row.dec * Math.PI) / 180), other.dec - row.dec) * 3.6e6).toBeLessThan(1);
      expect(Math.abs(other.unc!.major / row.unc!.major - 1)).toBeLessThan(0.1);
      if (k % 3 === 0) expect(other.unc!.major).toBeCloseTo(row.unc!.major, 6);
    });
  });

  it('refuses a spread cadence that is not a whole number of at least 1', () => {
    const { now, estimate } = simulatedEstimate(4, 50);
    expect(() => estimate.ephemeris({ latDeg: 34.21, lonDeg: -107.62, heightM: 2310 }, [now, new Date(now.getTime() + 3600_000), new Date(now.getTime() + 7200_000)], { spreadEvery: 0.5 })).toThrow(/spreadEvery.*whole number/);
  });
});
