import { describe, expect, it } from 'vitest';
import { nightAt } from '../../src/sky/night.js';
import { buildTonightChart, closingWords, renderTonightChart, skyBands, tonightSpan, type TonightObject, type TonightRequest } from '../../src/views/tonight-chart.js';
import { demoConfig } from '../helpers.js';
import { overlappingLabels } from './boxes.js';
import { byClass, parseXml, textOf, type XmlElement } from './xml.js';

const config = demoConfig();
const lantern = config.sites.find((s) => s.id === 'lantern-ridge')!;
// Lantern Ridge, night of 2027-03-03: sunset about 01:07 UTC, dark about 02:02-12:41 UTC (the sky module's night).
const night = nightAt(lantern, '2027-03-03');
const at = (hhmm: string, day = '2027-03-04') => new Date(`${day}T${hhmm}:00Z`);

function request(id: string, kind: string, score: number, start: string, end: string, rec: string, durationS: number, state = 'queued'): TonightRequest {
  return { requestId: id, kind, state, score, windowStartUtc: at(start), windowEndUtc: at(end), recommendedStartUtc: at(rec), durationS, closesBecause: 'altitude falls below 25 deg' };
}

function object(objectId: string, requests: TonightRequest[], windows: TonightObject['windows'] = []): TonightObject {
  const altitude = Array.from({ length: 60 }, (_, k) => ({ t: new Date(at('02:00').getTime() + k * 600_000), altDeg: 30 + 40 * Math.sin((k / 60) * Math.PI) }));
  return { objectId, requests, windows, altitude, altitudeSource: 'estimate' };
}

const OBJECTS: TonightObject[] = [
  object('QV27C02', [request('r-21', 'photometry', 61.2, '04:00', '09:00', '04:00', 14_400), request('r-22', 'colours', 70.5, '04:00', '09:00', '06:10', 300)], [
    { startUtc: at('03:40'), endUtc: at('09:20'), opensBecause: 'altitude reaches 25 deg', closesBecause: 'altitude falls below 25 deg' },
  ]),
  object('QV27C01', [request('r-11', 'spectrum', 84.3, '02:30', '06:00', '03:00', 1200, 'leased')], [
    { startUtc: at('02:10'), endUtc: at('06:30'), opensBecause: 'dusk: Sun at -12 deg', closesBecause: 'goes behind the horizon mask (altitude 31.2 deg at azimuth 140.0 deg, mask 31.5 deg there)' },
    { startUtc: at('08:00'), endUtc: at('12:41'), opensBecause: 'rises clear of the horizon mask', closesBecause: 'dawn: Sun at -12 deg' },
  ]),
  object('QV27C03', [request('r-31', 'photometry', 55, '10:00', '12:00', '10:00', 3600)]),
];

const render = (objects = OBJECTS, now?: Date) => parseXml(renderTonightChart(buildTonightChart({ site: lantern, night, objects, ...(now ? { now } : {}) })));

/** Pixels per millisecond and the x of a time, from two labelled UTC ticks of the picture (its own axis, read back). */
function axis(root: XmlElement): (t: Date) => number {
  const ticks = byClass(root, 'utc-tick').map((e) => ({ x: Number(e.attrs['x']), t: Date.parse(e.attrs['data-utc']!) }));
  const [a, b] = [ticks[0]!, ticks[ticks.length - 1]!];
  return (t) => a.x + ((t.getTime() - a.t) * (b.x - a.x)) / (b.t - a.t);
}

describe('tonight at a site, as a timeline', () => {
  it('has one row per object, ranked by its best request score', () => {
    const rows = byClass(render(), 'object-row');
    expect(rows.map((r) => r.attrs['data-object-id'])).toEqual(['QV27C01', 'QV27C02', 'QV27C03']);
    expect(rows.map((r) => Number(r.attrs['data-best-score']))).toEqual([84.3, 70.5, 55]);
    expect(rows.map((r) => r.attrs['data-rank'])).toEqual(['1', '2', '3']);
  });

  it('marks each request’s recommended start and expected duration where they fall on the time axis', () => {
    const root = render();
    const x = axis(root);
    for (const mark of byClass(root, 'request-mark')) {
      const block = mark.children.find((c) => c.name === 'rect')!;
      const start = new Date(mark.attrs['data-recommended-start']!);
      const end = new Date(start.getTime() + Number(mark.attrs['data-duration-s']) * 1000);
      expect(Number(block.attrs['x'])).toBeCloseTo(x(start), 1);
      expect(Number(block.attrs['x']) + Number(block.attrs['width'])).toBeCloseTo(Math.max(x(end), x(start) + 2), 1);
    }
    const leased = byClass(root, 'request-mark').find((m) => m.attrs['data-request-id'] === 'r-11')!;
    expect(leased.attrs['data-state']).toBe('leased');
  });

  it('draws the observable windows as bars with the altitude inside, and writes the limit that closes each at its end', () => {
    const root = render();
    const x = axis(root);
    const row = byClass(root, 'object-row').find((r) => r.attrs['data-object-id'] === 'QV27C01')!;
    const windows = byClass(row, 'window');
    expect(windows.map((w) => w.attrs['data-end'])).toEqual([at('06:30').toISOString(), at('12:41').toISOString()]);
    const bar = windows[0]!.children.find((c) => c.name === 'rect')!;
    expect(Number(bar.attrs['x']) + Number(bar.attrs['width'])).toBeCloseTo(x(at('06:30')), 1);
    expect(byClass(row, 'altitude')).toHaveLength(2);
    expect(byClass(row, 'closes').map(textOf)).toEqual(['horizon mask', 'dawn']);
    const closes = byClass(row, 'closes')[0]!;
    // Written just after the bar's end (start anchor) or just inside it (end anchor).
    const textX = Number(closes.attrs['x']);
    expect(Math.abs(textX - x(at('06:30')))).toBeLessThanOrEqual(4.01);
  });

  it('uses the request windows as the observable windows when none are given', () => {
    const row = byClass(render(), 'object-row').find((r) => r.attrs['data-object-id'] === 'QV27C03')!;
    expect(byClass(row, 'window').map((w) => [w.attrs['data-start'], w.attrs['data-end']])).toEqual([[at('10:00').toISOString(), at('12:00').toISOString()]]);
  });

  it('puts day, twilight, dark and moonlit time behind the rows as bands meeting at the night’s own times', () => {
    const { startUtc, endUtc } = tonightSpan(night);
    const bands = skyBands(lantern, night, startUtc, endUtc);
    expect(bands[0]!.start).toEqual(startUtc);
    expect(bands[bands.length - 1]!.end).toEqual(endUtc);
    for (let i = 1; i < bands.length; i++) expect(bands[i]!.start).toEqual(bands[i - 1]!.end);
    const edges = bands.map((b) => b.start.getTime());
    for (const t of [night.sunset, night.dark!.start, night.dark!.end, night.sunrise]) expect(edges).toContain(t!.getTime());
    const moonlit = bands.filter((b) => b.kind === 'moonlit');
    expect(moonlit.map((b) => [b.start, b.end])).toEqual(night.moon.upDuringDark.map((i) => [i.start, i.end]));
    const drawn = byClass(render(), 'sky-band').map((e) => e.attrs['data-kind']);
    expect(drawn).toEqual(bands.map((b) => b.kind));
  });

  it('shows UTC across with the site’s local clock beside it: America/Denver is UTC-7 before 14 March 2027', () => {
    const root = render();
    const utc = byClass(root, 'utc-tick').map(textOf);
    const local = byClass(root, 'local-tick').map(textOf);
    expect(utc.length).toBeGreaterThan(8);
    utc.forEach((u, i) => {
      const h = (Number(u.slice(0, 2)) + 24 - 7) % 24;
      expect(local[i]).toBe(`${String(h).padStart(2, '0')}${u.slice(2)}`);
    });
    expect(textOf(byClass(root, 'local-clock')[0]!)).toBe('local time, MST (UTC−7)');
  });

  it('lists the site’s hard limits and its horizon mask beside the chart', () => {
    const root = render();
    const limits = textOf(byClass(root, 'limits')[0]!);
    for (const words of ['altitude at least 25°', 'airmass at most 2.4', 'hour angle -5.5 to 5.5 h', 'Sun at least 45° away', '135°: 32°', '180°: 28°']) expect(limits).toContain(words);
    expect(byClass(root, 'horizon-mask')[0]!.attrs['data-points']).toBe('0:20 90:20 135:32 180:28 270:20 360:20');
  });

  it('draws the present as a line when it falls in the night', () => {
    const root = render(OBJECTS, at('05:00'));
    expect(byClass(root, 'now')[0]!.attrs['data-utc']).toBe(at('05:00').toISOString());
    expect(byClass(render(OBJECTS, at('20:00')), 'now')).toHaveLength(0);
  });

  it('keeps its labels apart (estimated text boxes), with a crowded row and windows closing at the edge', () => {
    const crowded = object(
      'QV27C04',
      [request('r-41', 'photometry', 40, '12:30', '12:41', '12:30', 600), request('r-42', 'colours', 41, '12:35', '12:41', '12:35', 300), request('r-43', 'spectrum', 42, '12:36', '12:41', '12:36', 200)],
      [
        { startUtc: at('12:00'), endUtc: at('12:20'), opensBecause: 'x', closesBecause: 'Moon separation falls below the limit (Moon 10.0 deg away, limit 12.0 deg)' },
        { startUtc: at('12:22'), endUtc: at('12:41'), opensBecause: 'x', closesBecause: 'dawn: Sun at -12 deg' },
      ],
    );
    expect(overlappingLabels(render([...OBJECTS, crowded], at('12:39')))).toEqual([]);
  });

  it('says so when there is nothing queued tonight', () => {
    expect(textOf(render([]))).toContain('No queued or leased requests at this site tonight.');
  });
});

describe('the words for the limit that closes a window', () => {
  it('shorten the sky module’s edge words', () => {
    expect(closingWords('dawn: Sun at -12 deg')).toBe('dawn');
    expect(closingWords('altitude falls below 25 deg')).toBe('altitude 25°');
    expect(closingWords('goes behind the horizon mask (altitude 31.2 deg at azimuth 140.0 deg, mask 31.5 deg there)')).toBe('horizon mask');
    expect(closingWords('airmass rises above 2.4')).toBe('airmass 2.4');
    expect(closingWords('hour angle passes 5.5 h')).toBe('hour angle 5.5 h');
    expect(closingWords('Moon separation falls below the limit (Moon 10.0 deg away, limit 12.0 deg)')).toBe('Moon too close');
    expect(closingWords('too faint for photometry 20 min later (V 21.3, airmass 2.10)')).toBe('too faint');
    expect(closingWords('end of the requested interval')).toBe('planning horizon ends');
  });
});
