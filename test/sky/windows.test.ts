import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import type { Site } from '../../src/config/schema.js';
import { loadConfig } from '../../src/config/load.js';
import * as Astronomy from 'astronomy-engine';
import type { TargetState } from '../../src/sky/limits.js';
import { nightAt } from '../../src/sky/night.js';
import { buildSkyTimeline } from '../../src/sky/timeline.js';
import { observableWindows } from '../../src/sky/windows.js';
import { independentLimitFailures } from './independent-limits.js';

const config = loadConfig({ env: {} });
const lanternRidge = config.sites.find((s) => s.id === 'lantern-ridge')!;
const kestrelHollow = config.sites.find((s) => s.id === 'kestrel-hollow')!;
const night = nightAt(lanternRidge, '2027-03-15');
const dark = night.dark!;
const fixed = (raDeg: number, decDeg: number) => (): TargetState => ({ raDeg, decDeg });
const seconds = (a: Date, b: Date) => Math.abs(a.getTime() - b.getTime()) / 1000;
/** Edges are passing times within 30 s of the crossing (docs/sky.md). */
const EDGE_S = 30;
/** lantern-ridge with the whole hour-angle range allowed, so only the sky decides. */
const anyHourAngle: Site = { ...lanternRidge, limits: { ...lanternRidge.limits, hourAngleH: { min: -12, max: 12 } } };

describe('observableWindows', () => {
  const spanStart = new Date(dark.start.getTime() - 2 * 3_600_000);
  const spanEnd = new Date(dark.end.getTime() + 2 * 3_600_000);

  it('keeps a target near the north celestial pole up for the whole dark interval, edged within 30 s of dusk and dawn', () => {
    const result = observableWindows(anyHourAngle, spanStart, spanEnd, fixed(40, 85));
    expect(result.windows).toHaveLength(1);
    const w = result.windows[0]!;
    // Dusk and dawn from astronomy-engine directly: the Sun's centre at -12 deg, unrefracted.
    const observer = new Astronomy.Observer(lanternRidge.location.latDeg, lanternRidge.location.lonDeg, lanternRidge.location.heightM);
    const dusk = Astronomy.SearchAltitude(Astronomy.Body.Sun, observer, -1, spanStart, 1, -12)!.date;
    const dawn = Astronomy.SearchAltitude(Astronomy.Body.Sun, observer, +1, dusk, 1, -12)!.date;
    expect(seconds(w.start, dusk)).toBeLessThan(EDGE_S);
    expect(seconds(w.end, dawn)).toBeLessThan(EDGE_S);
    expect(w.starts).toMatchObject({ limit: 'night', detail: 'dusk: Sun at -12 deg' });
    expect(w.ends).toMatchObject({ limit: 'night', detail: 'dawn: Sun at -12 deg' });
  });

  it('finds nothing for Dec -80 from latitude +40 and says why, with the highest altitude', () => {
    const lat40: Site = { ...anyHourAngle, location: { ...anyHourAngle.location, latDeg: 40 } };
    const result = observableWindows(lat40, spanStart, spanEnd, fixed(200, -80));
    // Highest geometric altitude 90 - 40 - 80 = -30 deg.
    expect(result.reasons.join('\n')).toMatch(/highest altitude -29\.\d deg/);
    expect(result.windows).toEqual([]);
    expect(result.reasons.join('\n')).toMatch(/never above 25 deg during the night: highest altitude -\d+\.\d deg/);
    expect(result.reasons.join('\n')).toMatch(/declination outside -35\.\.89 deg throughout the night: best declination -80\.0 deg, allowed -35\.\.89 deg/);
  });

  it('explains an interval with no night', () => {
    const noon = new Date('2027-03-16T19:00:00Z');
    const result = observableWindows(lanternRidge, noon, new Date(noon.getTime() + 3_600_000), fixed(0, 0));
    expect(result.reasons).toEqual([expect.stringMatching(/^no night in the interval: the Sun never gets below -12 deg \(lowest \d+\.\d deg\)$/)]);
  });

  it('puts a rising edge within 30 s of the crossing found by a 10-second scan with astronomy-engine, labelled by altitude', () => {
    // RA 12.5 h, Dec +10 rises in the east during the dark at lantern-ridge.
    const target = fixed(190, 10);
    const result = observableWindows(anyHourAngle, spanStart, spanEnd, target);
    const w = result.windows[0]!;
    expect(w.starts.limit).not.toBe('night');
    let firstOk: Date | null = null;
    for (let t = dark.start.getTime(); t < dark.end.getTime(); t += 10_000) {
      if (independentLimitFailures(anyHourAngle, new Date(t), target(), { deg: 0, h: 0, rate: 0 }).length === 0) {
        firstOk = new Date(t);
        break;
      }
    }
    expect(firstOk).not.toBeNull();
    expect(seconds(w.start, firstOk!)).toBeLessThan(EDGE_S);
    expect(['minAltitude', 'horizonMask', 'maxAirmass']).toContain(w.starts.limit);
  });

  it('labels hour-angle edges on a site that limits the hour angle', () => {
    const result = observableWindows(lanternRidge, spanStart, spanEnd, fixed(40, 85));
    const labels = result.windows.flatMap((w) => [w.starts.limit, w.ends.limit]);
    expect(labels).toContain('hourAngle');
    expect(result.windows.map((w) => w.starts.detail).concat(result.windows.map((w) => w.ends.detail)).join(' ')).toMatch(/hour angle (reaches -5\.5|passes 5\.5) h/);
  });

  it('splits a window where an alt-az mount passes the zenith keep-out, labelling both edges', () => {
    // kestrel-hollow (lat 36.08 N, keep-out 3 deg): Dec +36 passes within 0.1 deg of the zenith.
    const start = new Date('2027-03-15T06:00:00Z');
    const result = observableWindows(kestrelHollow, start, new Date(start.getTime() + 86_400_000), fixed(150, 36));
    const edges = result.windows.flatMap((w) => [w.starts.detail, w.ends.detail]);
    expect(edges).toContain('enters the zenith keep-out (above 87 deg)');
    expect(edges).toContain('leaves the zenith keep-out (above 87 deg)');
  });

  it('explains a target that is always too fast, with its rate', () => {
    const result = observableWindows(lanternRidge, spanStart, spanEnd, () => ({ raDeg: 190, decDeg: 10, raRateArcsecPerS: 70, decRateArcsecPerS: 0 }));
    expect(result.windows).toEqual([]);
    expect(result.reasons).toContain('always faster than 60 arcsec/s during the night: best rate 70.00 arcsec/s, limit 60 arcsec/s');
  });

  it('gives the same windows with a prepared sky timeline', () => {
    const timeline = buildSkyTimeline(lanternRidge, spanStart, spanEnd);
    const a = observableWindows(lanternRidge, spanStart, spanEnd, fixed(150, 20));
    const b = observableWindows(lanternRidge, spanStart, spanEnd, fixed(150, 20), { timeline });
    expect(b.windows).toEqual(a.windows);
  });

  it('labels an edge at the requested interval when the target is observable there', () => {
    const inside = new Date(dark.start.getTime() + 3_600_000);
    const result = observableWindows(anyHourAngle, inside, new Date(inside.getTime() + 3_600_000), fixed(40, 85));
    expect(result.windows[0]!.starts).toMatchObject({ limit: 'interval', detail: 'start of the requested interval' });
    expect(result.windows[0]!.ends).toMatchObject({ limit: 'interval', detail: 'end of the requested interval' });
  });

  it('has an independent re-check that can fail: the Sun up at noon, a target below 25 deg, a fast one', () => {
    const noon = new Date('2027-03-16T19:00:00Z');
    expect(independentLimitFailures(lanternRidge, noon, { raDeg: 0, decDeg: 0 }).map((f) => f.limit)).toContain('night');
    const low = independentLimitFailures(anyHourAngle, dark.start, { raDeg: 200, decDeg: -60 }).map((f) => f.limit);
    expect(low).toContain('minAltitude');
    expect(independentLimitFailures(lanternRidge, dark.start, { raDeg: 40, decDeg: 85, raRateArcsecPerS: 70 }).map((f) => f.limit)).toContain('maxRate');
  });

  it('refuses an interval that ends before it starts', () => {
    expect(() => observableWindows(lanternRidge, spanEnd, spanStart, fixed(0, 0))).toThrow(/endUtc = .*: must be after startUtc/);
  });

  it('refuses a target function that returns a non-finite RA, naming the time', () => {
    expect(() => observableWindows(lanternRidge, spanStart, spanEnd, () => ({ raDeg: Number.NaN, decDeg: 0 }))).toThrow(
      /targetAt\(\d{4}-\d{2}-\d{2}T[\d:.]+Z\)\.raDeg = NaN/,
    );
  });

  // Property: over random sites, targets (with linear motion) and dates, no minute inside any window violates a limit,
  // and every window edge is a passing time, as astronomy-engine sees it (within SLACK of independent-limits.ts).
  it('never contains a minute that violates a limit, re-evaluated with astronomy-engine (fast-check over targets and sites)', () => {
    const baseSites = [lanternRidge, kestrelHollow];
    fc.assert(
      fc.property(
        fc.record({
          siteIndex: fc.integer({ min: 0, max: 1 }),
          latDeg: fc.double({ min: -60, max: 60, noNaN: true }),
          lonDeg: fc.double({ min: -180, max: 180, noNaN: true }),
          raDeg: fc.double({ min: 0, max: 359.99, noNaN: true }),
          decDeg: fc.double({ min: -70, max: 80, noNaN: true }),
          raRate: fc.double({ min: -0.05, max: 0.05, noNaN: true }),
          decRate: fc.double({ min: -0.05, max: 0.05, noNaN: true }),
          dayOffset: fc.integer({ min: 0, max: 364 }),
        }),
        (p) => {
          const base = baseSites[p.siteIndex]!;
          const site: Site = { ...base, location: { latDeg: p.latDeg, lonDeg: p.lonDeg, heightM: 1000 } };
          const start = new Date(Date.UTC(2027, 0, 1) + p.dayOffset * 86_400_000);
          const end = new Date(start.getTime() + 24 * 3_600_000);
          const t0 = start.getTime();
          const targetAt = (t: Date): TargetState => {
            const dtS = (t.getTime() - t0) / 1000;
            const decDeg = Math.max(-89, Math.min(89, p.decDeg + (p.decRate * dtS) / 3600));
            const raDeg = (((p.raDeg + (p.raRate * dtS) / 3600 / Math.cos((decDeg * Math.PI) / 180)) % 360) + 360) % 360;
            return { raDeg, decDeg, raRateArcsecPerS: p.raRate, decRateArcsecPerS: p.decRate };
          };
          const result = observableWindows(site, start, end, targetAt);
          // Re-evaluated with astronomy-engine directly (independent-limits.ts), edges and every minute between.
          for (const w of result.windows) {
            const times = [w.start.getTime(), w.end.getTime()];
            for (let t = w.start.getTime(); t <= w.end.getTime(); t += 60_000) times.push(t);
            for (const t of times) {
              const failures = independentLimitFailures(site, new Date(t), targetAt(new Date(t)));
              if (failures.length > 0) throw new Error(`violation at ${new Date(t).toISOString()}: ${failures.map((f) => `${f.limit} by ${f.by}`).join(', ')}`);
            }
          }
          if (result.windows.length === 0) expect(result.reasons.length).toBeGreaterThan(0);
        },
      ),
      { numRuns: 25, seed: 20270315 },
    );
  });
});
