import { describe, expect, it } from 'vitest';
import { LabelPlacer, textBox, textWidthPx, wrapText } from '../../src/views/layout.js';
import { localClock, utcOffsetLabel } from '../../src/views/local-time.js';
import { demoConfig } from '../helpers.js';

describe('estimated text widths', () => {
  it('are at least the DejaVu Sans advance widths of a few known strings (from the font’s metrics, 2048 units per em; from memory)', () => {
    // "0123456789": ten digits of 1303 units; "mmm": three of 1995; "Wide": 2025 + 569 + 1300 + 1260.
    expect(textWidthPx('0123456789', 10)).toBeGreaterThanOrEqual((10 * 1303 * 10) / 2048);
    expect(textWidthPx('mmm', 10)).toBeGreaterThanOrEqual((3 * 1995 * 10) / 2048);
    expect(textWidthPx('Wide', 10)).toBeGreaterThanOrEqual(((2025 + 569 + 1300 + 1260) * 10) / 2048);
  });

  it('grow with the font size and with bold', () => {
    expect(textWidthPx('limit', 12)).toBeCloseTo((textWidthPx('limit', 10) * 12) / 10, 9);
    expect(textWidthPx('limit', 10, true)).toBeGreaterThan(textWidthPx('limit', 10));
  });
});

describe('wrapping text', () => {
  it('breaks at spaces so no line is wider than asked, keeping every word', () => {
    const text = 'Every window lies inside the site’s hard limits; no score overrides them.';
    const lines = wrapText(text, 150, 11);
    expect(lines.length).toBeGreaterThan(1);
    for (const line of lines) expect(textWidthPx(line, 11)).toBeLessThanOrEqual(150);
    expect(lines.join(' ')).toBe(text);
  });
});

describe('placing labels', () => {
  it('takes the first candidate that overlaps nothing placed, or none', () => {
    const placer = new LabelPlacer();
    const a = textBox('first', 10, 20, 11);
    expect(placer.place([a])).toEqual(a);
    const b = textBox('second', 12, 21, 11);
    const c = textBox('second', 12, 40, 11);
    expect(placer.place([b, c])).toEqual(c);
    expect(placer.place([textBox('third', 10, 20, 11)])).toBeNull();
  });

  it('refuses a candidate outside the bounds', () => {
    const placer = new LabelPlacer();
    expect(placer.place([textBox('wide label', 95, 20, 11)], { x: 0, y: 0, w: 100, h: 100 })).toBeNull();
  });
});

describe('the site’s local clock', () => {
  const lantern = demoConfig().sites.find((s) => s.id === 'lantern-ridge')!;

  it('writes offsets as UTC+9, UTC−7 and UTC−7:10', () => {
    expect(utcOffsetLabel(540)).toBe('UTC+9');
    expect(utcOffsetLabel(-420)).toBe('UTC−7');
    expect(utcOffsetLabel(-430)).toBe('UTC−7:10');
  });

  it('follows the time zone’s daylight saving: America/Denver moves from UTC−7 to UTC−6 at 09:00 UTC on 14 March 2027 (second Sunday of March, 02:00 local)', () => {
    const clock = localClock(lantern, new Date('2027-03-14T12:00:00Z'));
    expect(clock.hhmm(new Date('2027-03-14T08:30:00Z'))).toBe('01:30');
    expect(clock.hhmm(new Date('2027-03-14T09:30:00Z'))).toBe('03:30');
    expect(clock.label).toBe('local time, MDT (UTC−6)');
  });

  it('is local mean time, UTC + east longitude / 15 h, for a site without a time zone', () => {
    const { timeZone: _zone, ...noZone } = lantern;
    const clock = localClock(noZone, new Date('2027-03-04T06:00:00Z'));
    // -107.62 deg / 15 = -7.175 h = -7 h 10.5 min, rounded to -7 h 10 min.
    expect(clock.label).toBe('local mean time (UTC−7:10)');
    expect(clock.hhmm(new Date('2027-03-04T06:00:00Z'))).toBe('22:50');
  });
});
