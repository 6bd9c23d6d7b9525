import * as Astronomy from 'astronomy-engine';
import { describe, expect, it } from 'vitest';
import '../../src/sky/time-scale.js'; // the project's TT, as everywhere the library is used

/**
 * Library sanity: astronomy-engine alone, checked against published worked examples. These
 * test no code of ours; they show that the library the sky and orbit modules build on
 * reproduces the handbook where we rely on it (Sun, Moon, illumination, refraction).
 * The project's own functions are tested in the other files of this folder.
 */

const raDecFromVector = ([x, y, z]: [number, number, number]) => ({
  raDeg: ((Math.atan2(y, x) * 180) / Math.PI + 360) % 360,
  decDeg: (Math.atan2(z, Math.hypot(x, y)) * 180) / Math.PI,
});
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

  // Meeus Example 25.b (full VSOP87, same instant): 13h13m30.749s, -7d47m01.74s. The book's page was not at
  // hand; the values agree with independent public test suites that quote the same example.
  // Measured 0.21" in RA cos Dec and 0.77" in Dec.
  it('is within 0.4 arcsec (RA cos Dec) and 1 arcsec (Dec) of Meeus Example 25.b', () => {
    const sun = geocentricApparentSun(time);
    const cosDec = Math.cos(sun.decDeg * (Math.PI / 180));
    expect(Math.abs(sun.raDeg - hms(13, 13, 30.749) * 15) * cosDec * 3600).toBeLessThan(0.4);
    expect(Math.abs(sun.decDeg + hms(7, 47, 1.74)) * 3600).toBeLessThan(1);
  });
});

describe('Moon (astronomy-engine, checked against Meeus)', () => {
  const time = fromTdJulianDay(2448724.5); // 1992 Apr 12.0 TD

  // Meeus Example 47.a: lambda = 133.162655 deg (+ nutation 0.004610 = apparent 133.167265), beta = -3.229126 deg,
  // distance 368409.7 km. astronomy-engine's lunar theory and Meeus's truncated ELP-2000 each carry ~10"
  // and ~10-20 km, so tolerances are 10 arcsec and 30 km.
  // Measured 2.3" in longitude, 0.8" in latitude, 14.8 km.
  it('is within 4.5 arcsec, 1.6 arcsec and 29 km of Meeus Example 47.a', () => {
    const moon = Astronomy.EclipticGeoMoon(time); // true ecliptic and equinox of date
    expect(Math.abs(moon.lon - 133.167265) * 3600).toBeLessThan(4.5);
    expect(Math.abs(moon.lat + 3.229126) * 3600).toBeLessThan(1.6);
    expect(Math.abs(moon.dist * Astronomy.KM_PER_AU - 368409.7)).toBeLessThan(29);
  });

  // Meeus Example 48.a: illuminated fraction k = 0.6786 (phase angle i = 69.0756 deg).
  // Measured 0.67852.
  it('has the illuminated fraction of Meeus Example 48.a within 0.00015', () => {
    expect(Math.abs(Astronomy.Illumination(Astronomy.Body.Moon, time).phase_fraction - 0.6786)).toBeLessThan(0.00015);
  });

});

describe('refraction (astronomy-engine normal, checked against Meeus ch. 16)', () => {
  const bennettArcmin = (apparentDeg: number) => 1 / Math.tan((apparentDeg + 7.31 / (apparentDeg + 4.4)) * (Math.PI / 180));
  const saemundssonArcmin = (trueDeg: number) => 1.02 / Math.tan((trueDeg + 10.3 / (trueDeg + 5.11)) * (Math.PI / 180));

  // Saemundsson (1986), Meeus eq. 16.4: R in arcmin from the true altitude.
  it.each([0, 5, 15, 30, 45, 60, 89])('follows Saemundsson at true altitude %d deg within 0.01 arcmin', (h) => {
    expect(Math.abs(Astronomy.Refraction('normal', h) * 60 - saemundssonArcmin(h))).toBeLessThan(0.01);
  });

  // Bennett (1982), Meeus eq. 16.3 from the apparent altitude; Meeus: the two agree to about 0.1 arcmin.
  it.each([1, 5, 15, 30, 60, 85])('is consistent with Bennett at true altitude %d deg within 0.1 arcmin', (h) => {
    const r = Astronomy.Refraction('normal', h);
    expect(Math.abs(r * 60 - bennettArcmin(h + r))).toBeLessThan(0.1);
  });

  it('round-trips through the inverse refraction within 0.01 arcsec above 1 deg', () => {
    for (const h of [1, 10, 30, 60]) {
      const bent = h + Astronomy.Refraction('normal', h);
      expect(Math.abs(bent + Astronomy.InverseRefraction('normal', bent) - h) * 3600).toBeLessThan(0.01);
    }
  });
});

