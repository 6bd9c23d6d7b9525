import { describe, expect, it } from 'vitest';
import { loadConfig } from '../../src/config/load.js';
import { angleBetweenDeg } from '../../src/sky/site.js';
import { buildSkyTimeline, skyAt, skyFromTimeline } from '../../src/sky/timeline.js';
import { evaluateLimitsInSky } from '../../src/sky/limits.js';

const site = loadConfig({ env: {} }).sites[0]!;
const start = new Date('2027-03-15T18:00:00Z');
const end = new Date('2027-03-17T06:00:00Z');
const timeline = buildSkyTimeline(site, start, end);

describe('sky timeline interpolation (checked against exact astronomy-engine positions)', () => {
  // Odd offsets land between the 20-minute nodes, where the interpolation error is largest.
  const probes = Array.from({ length: 40 }, (_, i) => new Date(start.getTime() + (i * 53 + 10) * 60_000));

  it('keeps the Sun within 0.001 deg and the Moon within 0.002 deg of the exact apparent place', () => {
    let sunMax = 0;
    let moonMax = 0;
    for (const t of probes) {
      const exact = skyAt(site, t);
      const interp = skyFromTimeline(timeline, t);
      sunMax = Math.max(sunMax, angleBetweenDeg(exact.sun.eqdUnit, interp.sun.eqdUnit), Math.abs(exact.sun.geometricAltDeg - interp.sun.geometricAltDeg));
      moonMax = Math.max(moonMax, angleBetweenDeg(exact.moon.eqdUnit, interp.moon.eqdUnit), Math.abs(exact.moon.geometricAltDeg - interp.moon.geometricAltDeg));
    }
    expect(sunMax).toBeLessThan(0.001);
    expect(moonMax).toBeLessThan(0.002);
  });

  it('keeps every limit margin for a target within 0.002 deg (or 0.0001 h) of the exact evaluation', () => {
    for (const t of probes) {
      const target = { raDeg: 150, decDeg: 20 };
      const exact = evaluateLimitsInSky(site, skyAt(site, t), target);
      const interp = evaluateLimitsInSky(site, skyFromTimeline(timeline, t), target);
      for (const c of exact.checks) {
        const d = interp.checks.find((x) => x.limit === c.limit)!;
        expect(Math.abs(c.margin - d.margin)).toBeLessThan(c.unit === 'h' ? 0.0001 : 0.002);
      }
    }
  });

  it('refuses a time outside the timeline', () => {
    expect(() => skyFromTimeline(timeline, new Date('2027-03-18T00:00:00Z'))).toThrow(/outside the sky timeline/);
  });
});
