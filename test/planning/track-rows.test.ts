import { describe, expect, it } from 'vitest';
import { ephemerisFromElements } from '../../src/orbit/ephemeris.js';
import { estimateFromElements } from '../../src/planning/estimate-from-elements.js';
import { buildTrack } from '../../src/planning/track.js';
import { horizontalFromIcrs } from '../../src/sky/site.js';
import { ttFromUtc } from '../../src/orbit/time.js';

// An invented near-Earth orbit (elements chosen for the test), seen from an invented site.
const site = { latDeg: 34.21, lonDeg: -107.62, heightM: 2310 };
const now = new Date('2027-03-04T06:00:00Z');
const elements = { qAu: 0.92, e: 0.31, iDeg: 8.4, nodeDeg: 163.2, periDeg: 241.7, tpTt: ttFromUtc(now) - 20 };
const epochTt = ttFromUtc(now);

describe('rows taken from the planning track', () => {
  it('match a fresh ephemeris at times between the samples within 0.01 arcsec and 0.01 deg in altitude', () => {
    const estimate = estimateFromElements({ objectId: 'TT27A01', elements, epochTt, firstObservedAt: now.toISOString(), hMag: 21 });
    const start = now.getTime();
    const track = buildTrack(estimate, site, start, start + 24 * 3600_000);
    const times = Array.from({ length: 40 }, (_, k) => new Date(start + 7 * 60_000 + k * 33.3 * 60_000));
    const direct = ephemerisFromElements(elements, epochTt, site, times);
    times.forEach((t, k) => {
      const row = track.rowAt(t.getTime());
      const d = direct[k]!;
      const dRa = (row.ra - d.ra) * Math.cos((d.dec * Math.PI) / 180) * 3600;
      expect(Math.hypot(dRa, (row.dec - d.dec) * 3600)).toBeLessThan(0.01);
      // Altitude is recomputed by the sky module for the interpolated place (refraction included).
      expect(Math.abs(row.alt - horizontalFromIcrs(site, t, d.ra, d.dec).altDeg)).toBeLessThan(0.01);
    });
  });
});
