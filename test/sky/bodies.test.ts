import * as Astronomy from 'astronomy-engine';
import { describe, expect, it } from 'vitest';
import { moonAndSunInFrame } from '../../src/sky/bodies.js';
import { siteFrameAt } from '../../src/sky/site.js';

const fromTdJulianDay = (jd: number) => Astronomy.AstroTime.FromTerrestrialTime(jd - 2451545.0);

describe('the Moon as the sky module sees it from a site', () => {
  const time = fromTdJulianDay(2448724.5); // 1992 Apr 12.0 TD (Meeus Example 47.a)

  it('gives a topocentric phase angle within the lunar parallax (1 deg) of the geocentric one', () => {
    const frame = siteFrameAt({ latDeg: 0, lonDeg: 0, heightM: 0 }, time.date);
    const { moon } = moonAndSunInFrame(frame);
    const geocentric = Astronomy.Illumination(Astronomy.Body.Moon, time).phase_angle;
    // Parallax bound: Earth radius / Moon distance = 0.95 deg.
    expect(Math.abs(moon.phaseAngleDeg - geocentric)).toBeLessThan(1.0);
  });

  it('agrees with astronomy-engine topocentric Equator + Horizon for the Moon within 0.01 deg and 1 km', () => {
    const frame = siteFrameAt({ latDeg: 34.21, lonDeg: -107.62, heightM: 2310 }, time.date);
    const { moon } = moonAndSunInFrame(frame);
    const geo = Astronomy.Equator(Astronomy.Body.Moon, time, new Astronomy.Observer(34.21, -107.62, 2310), true, true);
    const hor = Astronomy.Horizon(time, new Astronomy.Observer(34.21, -107.62, 2310), geo.ra, geo.dec, 'normal');
    expect(Math.abs(moon.altDeg - hor.altitude)).toBeLessThan(0.01);
    expect(Math.abs(moon.distanceKm - geo.dist * Astronomy.KM_PER_AU)).toBeLessThan(1);
  });
});
