import * as Astronomy from 'astronomy-engine';
import { describe, expect, it } from 'vitest';
import type { Site } from '../../src/config/schema.js';
import { loadConfig } from '../../src/config/load.js';
import { localMeanNoonUtc, nightAt, nightToJson } from '../../src/sky/night.js';
import { noaaSunEvent } from './noaa-sun.js';

const config = loadConfig({ env: {} });
const lanternRidge = config.sites.find((s) => s.id === 'lantern-ridge')!;
const rad = Math.PI / 180;

const minutesApart = (a: Date | null, b: Date) => Math.abs((a?.getTime() ?? Number.NaN) - b.getTime()) / 60_000;

describe('nightAt, demo site lantern-ridge, night of 2027-03-15', () => {
  const night = nightAt(lanternRidge, '2027-03-15');
  const { latDeg, lonDeg } = lanternRidge.location;
  // Local evening of Mar 15 at lon -107.6 is after 00:00 UTC of Mar 16; sunrise is on Mar 16 UTC as well.
  const utcDay = new Date('2027-03-16T00:00:00Z');

  // NOAA standard rise/set altitude -0.833 deg (34' refraction + 16' semidiameter); astronomy-engine scales the
  // refraction for the site's 2310 m, which moves the time by well under a minute here.
  it('has sunset within 2 minutes of the NOAA sunrise equation', () => {
    const expected = noaaSunEvent(new Date('2027-03-15T12:00:00Z'), latDeg, lonDeg, -0.833, -1);
    // The setting Sun on local Mar 15 falls on UTC Mar 16 ~01:10; the equation's UTC day is shifted accordingly.
    const e = expected.getTime() < night.span.start.getTime() ? new Date(expected.getTime() + 86_400_000) : expected;
    expect(minutesApart(night.sunset, e)).toBeLessThan(2);
  });

  it('has sunrise within 2 minutes of the NOAA sunrise equation', () => {
    expect(minutesApart(night.sunrise, noaaSunEvent(utcDay, latDeg, lonDeg, -0.833, +1))).toBeLessThan(2);
  });

  it('has dusk and dawn (Sun centre at -12 deg, unrefracted) within 2 minutes of the NOAA equation', () => {
    let dusk = noaaSunEvent(new Date('2027-03-15T12:00:00Z'), latDeg, lonDeg, -12, -1);
    if (dusk.getTime() < night.span.start.getTime()) dusk = new Date(dusk.getTime() + 86_400_000);
    expect(minutesApart(night.dusk, dusk)).toBeLessThan(2);
    expect(minutesApart(night.dawn, noaaSunEvent(utcDay, latDeg, lonDeg, -12, +1))).toBeLessThan(2);
  });

  it('orders sunset < dusk < dawn < sunrise and the dark interval is dusk to dawn', () => {
    const t = [night.sunset, night.dusk, night.dawn, night.sunrise].map((d) => d!.getTime());
    expect([...t].sort((a, b) => a - b)).toEqual(t);
    expect(night.dark).toEqual({ start: night.dusk, end: night.dawn });
    expect(night.darkH).toBeGreaterThan(9);
    expect(night.darkH).toBeLessThan(11);
  });

  it('has the Moon above the horizon in the middle of every moon-up part of the dark, and below outside', () => {
    const observer = new Astronomy.Observer(latDeg, lonDeg, lanternRidge.location.heightM);
    const altAt = (t: Date) => {
      const eq = Astronomy.Equator(Astronomy.Body.Moon, t, observer, true, true);
      return Astronomy.Horizon(t, observer, eq.ra, eq.dec, 'normal').altitude;
    };
    for (const i of night.moon.upDuringDark) {
      expect(altAt(new Date((i.start.getTime() + i.end.getTime()) / 2))).toBeGreaterThan(0);
    }
    expect(night.moon.upDuringDarkH + night.moon.moonFreeDarkH).toBeCloseTo(night.darkH, 9);
    // Sample the dark every 10 minutes: outside the moon-up parts the Moon's centre is below +0.5 deg.
    const dark = night.dark!;
    for (let t = dark.start.getTime(); t <= dark.end.getTime(); t += 600_000) {
      const inside = night.moon.upDuringDark.some((i) => t >= i.start.getTime() && t <= i.end.getTime());
      if (!inside) expect(altAt(new Date(t))).toBeLessThan(0.5);
    }
  });

  it('reports an illuminated fraction consistent with the phase angle', () => {
    expect(night.moon.illuminatedFraction).toBeCloseTo((1 + Math.cos(night.moon.phaseAngleDeg * rad)) / 2, 9);
  });

  it('renders ISO-8601 UTC strings in its JSON form', () => {
    const json = nightToJson(night) as { sunsetUtc: string };
    expect(json.sunsetUtc).toMatch(/^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}\.\d{3}Z$/);
  });
});

describe('nightAt edge cases', () => {
  const polar = (latDeg: number): Site => ({ ...lanternRidge, location: { latDeg, lonDeg: 15, heightM: 0 } });

  it('reports no dark time under the midnight Sun (lat 70 N, 21 June)', () => {
    const night = nightAt(polar(70), '2027-06-21');
    expect(night.dark).toBeNull();
    expect(night.notes.join(' ')).toMatch(/no dark time: the Sun does not go below -12 deg/);
  });

  it('reports a dark interval covering the whole span in polar night (lat 80 N, 21 December)', () => {
    const night = nightAt(polar(80), '2027-12-21');
    expect(night.darkH).toBeCloseTo(24, 6);
    expect(night.notes.join(' ')).toMatch(/polar night/);
  });

  it('refuses a malformed local date', () => {
    expect(() => nightAt(lanternRidge, '2027-3-15')).toThrow(/localDate = "2027-3-15": expected a date as YYYY-MM-DD/);
    expect(() => nightAt(lanternRidge, '2027-02-30')).toThrow(/no such calendar date/);
  });

  it('takes local mean noon from the longitude', () => {
    expect(localMeanNoonUtc('2027-03-15', -90).toISOString()).toBe('2027-03-15T18:00:00.000Z');
  });
});
