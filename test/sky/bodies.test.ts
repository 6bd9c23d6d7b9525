import * as Astronomy from 'astronomy-engine';
import { describe, expect, it } from 'vitest';
import { moonAndSunInFrame } from '../../src/sky/bodies.js';
import { raDecFromVector, siteFrameAt } from '../../src/sky/site.js';

const hms = (h: number, m: number, s: number) => h + m / 60 + s / 3600;
const fromTdJulianDay = (jd: number) => Astronomy.AstroTime.FromTerrestrialTime(jd - 2451545.0);

/** Geocentric apparent RA/Dec of date of the Sun (astronomy-engine, aberration on). */
function geocentricApparentSun(time: Astronomy.AstroTime) {
  const eqj = Astronomy.GeoVector(Astronomy.Body.Sun, time, true);
  const eqd = Astronomy.RotateVector(Astronomy.Rotation_EQJ_EQD(time), eqj);
  return raDecFromVector([eqd.x, eqd.y, eqd.z]);
}

describe('Sun (astronomy-engine, checked against Meeus)', () => {
  const time = fromTdJulianDay(2448908.5); // 1992 Oct 13.0 TD

  // Meeus Example 25.a (low-accuracy method, itself good to ~0.01 deg): 13h13m31.4s, -7d47m06s.
  it('is within 0.01 deg of Meeus Example 25.a', () => {
    const sun = geocentricApparentSun(time);
    expect(Math.abs(sun.raDeg - hms(13, 13, 31.4) * 15)).toBeLessThan(0.01);
    expect(Math.abs(sun.decDeg + hms(7, 47, 6))).toBeLessThan(0.01);
  });

  // Meeus Example 25.b (full VSOP87, same instant), values from memory: 13h13m30.749s, -7d47m01.74s.
  it('is within 1 arcsec of Meeus Example 25.b (values from memory)', () => {
    const sun = geocentricApparentSun(time);
    const cosDec = Math.cos(sun.decDeg * (Math.PI / 180));
    expect(Math.abs(sun.raDeg - hms(13, 13, 30.749) * 15) * cosDec * 3600).toBeLessThan(1);
    expect(Math.abs(sun.decDeg + hms(7, 47, 1.74)) * 3600).toBeLessThan(1);
  });
});

describe('Moon (astronomy-engine, checked against Meeus)', () => {
  const time = fromTdJulianDay(2448724.5); // 1992 Apr 12.0 TD

  // Meeus Example 47.a: lambda = 133.162655 deg (+ nutation 0.004610 = apparent 133.167265), beta = -3.229126 deg,
  // distance 368409.7 km. astronomy-engine's lunar theory and Meeus's truncated ELP-2000 each carry ~10"
  // and ~10-20 km, so tolerances are 10 arcsec and 30 km.
  it('is within 10 arcsec and 30 km of Meeus Example 47.a', () => {
    const moon = Astronomy.EclipticGeoMoon(time); // true ecliptic and equinox of date
    expect(Math.abs(moon.lon - 133.167265) * 3600).toBeLessThan(10);
    expect(Math.abs(moon.lat + 3.229126) * 3600).toBeLessThan(10);
    expect(Math.abs(moon.dist * Astronomy.KM_PER_AU - 368409.7)).toBeLessThan(30);
  });

  // Meeus Example 48.a: illuminated fraction k = 0.6786 (phase angle i = 69.0756 deg).
  it('has the illuminated fraction of Meeus Example 48.a within 0.001', () => {
    expect(Math.abs(Astronomy.Illumination(Astronomy.Body.Moon, time).phase_fraction - 0.6786)).toBeLessThan(0.001);
  });

  it('gives a topocentric phase angle within the lunar parallax (1 deg) of the geocentric one', () => {
    const frame = siteFrameAt({ latDeg: 0, lonDeg: 0, heightM: 0 }, time.date);
    const { moon } = moonAndSunInFrame(frame);
    const geocentric = Astronomy.Illumination(Astronomy.Body.Moon, time).phase_angle;
    // Parallax bound: Earth radius / Moon distance = 0.95 deg.
    expect(Math.abs(moon.phaseAngleDeg - geocentric)).toBeLessThan(1.0);
    expect(Math.abs(moon.illuminatedFraction - (1 + Math.cos((moon.phaseAngleDeg * Math.PI) / 180)) / 2)).toBeLessThan(1e-12);
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
