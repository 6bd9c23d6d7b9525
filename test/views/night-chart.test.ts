import * as Astronomy from 'astronomy-engine';
import { describe, expect, it } from 'vitest';
import { nightAt } from '../../src/sky/night.js';
import { buildNightChart, renderNightChart, sampleTimes, type NightObjectInput } from '../../src/views/night-chart.js';
import { demoConfig } from '../helpers.js';
import { byClass, parseXml, textOf } from './xml.js';

const config = demoConfig();
const site = config.sites[0]!; // lantern-ridge, 34.21 N 107.62 W
const LOCAL_DATE = '2027-03-03';
const night = nightAt(site, LOCAL_DATE);

/** An invented altitude track: a hump peaking at `peakDeg` at `peakIso`. */
function invented(objectId: string, peakIso: string, peakDeg: number, windows: NightObjectInput['windows']): NightObjectInput {
  const peak = Date.parse(peakIso);
  const track = sampleTimes(night.span.start, night.span.end).map((t) => ({ t, altDeg: peakDeg - Math.abs(t.getTime() - peak) / 3_600_000 * 9 }));
  return { objectId, trackSource: 'estimate', track, windows };
}

const w = (requestId: string, kind: string, score: number, start: string, end: string, state = 'queued') => ({ requestId, kind, state, score, startUtc: new Date(start), endUtc: new Date(end) });

const objects = [
  invented('QV27C01', '2027-03-04T06:30:00Z', 75, [w('rq_a', 'photometry', 76, '2027-03-04T05:00:00Z', '2027-03-04T08:00:00Z'), w('rq_b', 'spectrum', 82, '2027-03-04T06:00:00Z', '2027-03-04T07:00:00Z', 'leased')]),
  invented('QV27C02', '2027-03-04T09:00:00Z', 60, [w('rq_c', 'colours', 71, '2027-03-04T08:00:00Z', '2027-03-04T10:00:00Z')]),
];

describe('the night chart data', () => {
  it('samples the Moon as astronomy-engine places it (topocentric, refracted), within 0.05 deg', () => {
    const chart = buildNightChart({ site, localDate: LOCAL_DATE, night, objects: [] });
    const observer = new Astronomy.Observer(site.location.latDeg, site.location.lonDeg, site.location.heightM);
    for (const sample of [chart.moon[0]!, chart.moon[Math.floor(chart.moon.length / 2)]!, chart.moon[chart.moon.length - 1]!]) {
      const eq = Astronomy.Equator(Astronomy.Body.Moon, sample.t, observer, true, true);
      const hor = Astronomy.Horizon(sample.t, observer, eq.ra, eq.dec, 'normal');
      expect(Math.abs(sample.altDeg - hor.altitude)).toBeLessThan(0.05);
    }
  });

  it('spans sunset minus 30 min to sunrise plus 30 min', () => {
    const chart = buildNightChart({ site, localDate: LOCAL_DATE, night, objects: [] });
    expect(chart.startUtc.getTime()).toBe(night.sunset!.getTime() - 30 * 60_000);
    expect(chart.endUtc.getTime()).toBe(night.sunrise!.getTime() + 30 * 60_000);
  });

  it('takes the airmass limit when it binds above the minimum altitude (airmass 1.5 near altitude 41.8 deg)', () => {
    const strict = demoConfig((raw) => {
      ((raw['sites'] as Record<string, unknown>[])[0]!['limits'] as Record<string, unknown>)['maxAirmass'] = 1.5;
    }).sites[0]!;
    const chart = buildNightChart({ site: strict, localDate: LOCAL_DATE, night, objects: [] });
    // Plane-parallel sec z = 1.5 gives 41.81 deg; Kasten & Young differ from it by well under 0.1 deg this high.
    expect(Math.abs(chart.limitAltDeg - 41.81)).toBeLessThan(0.1);
    expect(chart.limitReason).toContain('airmass 1.5');
  });
});

describe('the night chart picture', () => {
  const svg = renderNightChart(buildNightChart({ site, localDate: LOCAL_DATE, night, objects, now: new Date('2027-03-04T06:00:00Z') }));
  const root = parseXml(svg);

  it('is well-formed XML that starts with its title and description', () => {
    expect(root.name).toBe('svg');
    expect(root.children[0]!.name).toBe('title');
    expect(textOf(root.children[0]!)).toContain('Lantern Ridge');
    expect(root.children[1]!.name).toBe('desc');
  });

  it('draws one curve per object', () => {
    expect(byClass(root, 'object-curve').map((e) => e.attrs['data-object-id'])).toEqual(['QV27C01', 'QV27C02']);
  });

  it('draws every request window with its score, kind and times', () => {
    const windows = byClass(root, 'request-window');
    expect(windows.map((e) => [e.attrs['data-request-id'], e.attrs['data-kind'], Number(e.attrs['data-score'])])).toEqual([
      ['rq_a', 'photometry', 76],
      ['rq_b', 'spectrum', 82],
      ['rq_c', 'colours', 71],
    ]);
    expect(windows[1]!.attrs['data-start']).toBe('2027-03-04T06:00:00.000Z');
  });

  it('labels each object with its designation and the scores of its windows, in text', () => {
    const labels = byClass(root, 'object-label').map(textOf);
    expect(labels).toEqual(['QV27C01: phot 76, spec 82 leased', 'QV27C02: col 71']);
  });

  it('draws the altitude limit of the site as a line', () => {
    const limit = byClass(root, 'altitude-limit');
    expect(limit).toHaveLength(1);
    expect(Number(limit[0]!.attrs['data-altitude-deg'])).toBe(25);
  });

  it('shades twilight and the dark interval between the sky module’s events, with words', () => {
    const dark = byClass(root, 'dark')[0]!;
    expect(dark.attrs['data-start']).toBe(night.dusk!.toISOString());
    expect(dark.attrs['data-end']).toBe(night.dawn!.toISOString());
    const twilight = byClass(root, 'twilight');
    expect(twilight.map((e) => e.attrs['data-start'])).toEqual([night.sunset!.toISOString(), night.dawn!.toISOString()]);
    expect(textOf(root)).toContain('twilight');
    expect(textOf(root)).toContain('dark (Sun below -12°)');
  });

  it('shows the Moon’s illuminated fraction', () => {
    const moon = byClass(root, 'moon-curve');
    expect(moon).toHaveLength(1);
    expect(Number(moon[0]!.attrs['data-illuminated-fraction'])).toBeCloseTo(night.moon.illuminatedFraction, 3);
  });

  it('labels the sidereal axis with local sidereal time from astronomy-engine (GAST + east longitude), within 1 s', () => {
    const ticks = byClass(root, 'lst-tick');
    expect(ticks.length).toBeGreaterThan(8);
    for (const tick of ticks) {
      const utc = byClass(root, 'utc-tick').find((u) => u.attrs['x'] === tick.attrs['x'])!;
      const t = new Date(utc.attrs['data-utc']!);
      const expected = (((Astronomy.SiderealTime(t) + site.location.lonDeg / 15) % 24) + 24) % 24;
      expect(Math.abs(Number(tick.attrs['data-lst-h']) - expected) * 3600).toBeLessThan(1);
    }
  });

  it('says so when no request is open that night', () => {
    const empty = parseXml(renderNightChart(buildNightChart({ site, localDate: LOCAL_DATE, night, objects: [] })));
    expect(byClass(empty, 'object-curve')).toHaveLength(0);
    expect(textOf(empty)).toContain('No queued or leased');
  });
});
