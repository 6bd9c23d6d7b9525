import * as Astronomy from 'astronomy-engine';
import { describe, expect, it } from 'vitest';
import { SkyInputError } from '../../src/sky/errors.js';
import {
  airmassKastenYoung,
  altitudeForAirmassDeg,
  apparentFromEqd,
  apparentInFrame,
  greenwichApparentSiderealTimeH,
  greenwichMeanSiderealTimeH,
  horizontalFromIcrs,
  horizontalFromOfDate,
  hourAngleH,
  localSiderealTimeH,
  observerFromLocation,
  parallacticAngleDeg,
  parallacticAngleFromHourAngleDeg,
  siteFrameAt,
  unitVectorFromRaDec,
} from '../../src/sky/site.js';

const ARCSEC_DEG = 1 / 3600;
const hms = (h: number, m: number, s: number) => h + m / 60 + s / 3600;
const dms = (d: number, m: number, s: number) => Math.sign(d || 1) * (Math.abs(d) + m / 60 + s / 3600);
const demoSite = { latDeg: 34.21, lonDeg: -107.62, heightM: 2310 };

describe('observerFromLocation', () => {
  it('keeps latitude, longitude and height of a valid site', () => {
    const o = observerFromLocation(demoSite);
    expect([o.latitude, o.longitude, o.height]).toEqual([34.21, -107.62, 2310]);
  });

  it('maps longitudes given as 0..360 east to -180..180', () => {
    expect(observerFromLocation({ latDeg: 0, lonDeg: 252.38, heightM: 0 }).longitude).toBeCloseTo(-107.62, 9);
  });

  it('refuses a latitude outside -90..90, naming the field', () => {
    expect(() => observerFromLocation({ latDeg: 91, lonDeg: 0, heightM: 0 })).toThrow(/location\.latDeg = 91/);
  });

  it('refuses a non-finite height', () => {
    expect(() => observerFromLocation({ latDeg: 0, lonDeg: 0, heightM: Number.NaN })).toThrow(SkyInputError);
  });
});

describe('sidereal time', () => {
  // Meeus, Astronomical Algorithms (2nd ed.), Example 12.a: 1987 Apr 10, 0h UT, mean 13h10m46.3668s.
  // Measured 3.3 ms off (docs/accuracy.md).
  it('matches Meeus Example 12.a mean sidereal time within 0.006 s', () => {
    const gmst = greenwichMeanSiderealTimeH(new Date('1987-04-10T00:00:00Z'));
    expect(Math.abs(gmst - hms(13, 10, 46.3668)) * 3600).toBeLessThan(0.006);
  });

  // Meeus Example 12.b (same instant): apparent 13h10m46.1351s (equation of the equinoxes -0.2317 s).
  // Measured 7.8 ms off.
  it('matches Meeus Example 12.b apparent sidereal time within 0.01 s', () => {
    const gast = greenwichApparentSiderealTimeH(new Date('1987-04-10T00:00:00Z'));
    expect(Math.abs(gast - hms(13, 10, 46.1351)) * 3600).toBeLessThan(0.01);
  });

  it('adds east longitude to Greenwich apparent sidereal time for the local value', () => {
    const t = new Date('1987-04-10T00:00:00Z');
    const lst = localSiderealTimeH({ latDeg: 0, lonDeg: 90, heightM: 0 }, t);
    expect(lst).toBeCloseTo((greenwichApparentSiderealTimeH(t) + 6) % 24, 9);
  });

  it('refuses an invalid date', () => {
    expect(() => greenwichMeanSiderealTimeH(new Date('not a date'))).toThrow(/timeUtc = Invalid Date/);
  });
});

describe('horizontal coordinates', () => {
  // Meeus Example 13.b: Venus from the US Naval Observatory (38d55m17s N, 77d03m56s W), 1987 Apr 10 19:21 UT,
  // apparent RA 23h09m16.641s, Dec -6d43m11.61s; A = 68.0337 deg west of south (= 248.0337 from north), h = 15.1249 deg.
  // Measured 0.00008 deg in azimuth and 0.00005 deg in altitude (the book's last digit).
  it('matches Meeus Example 13.b within 0.00015 deg without refraction', () => {
    const usno = { latDeg: dms(38, 55, 17), lonDeg: -dms(77, 3, 56), heightM: 0 };
    const hor = horizontalFromOfDate(usno, new Date('1987-04-10T19:21:00Z'), hms(23, 9, 16.641) * 15, dms(-6, 43, 11.61), {
      refraction: false,
    });
    expect(Math.abs(hor.azDeg - 248.0337)).toBeLessThan(0.00015);
    expect(Math.abs(hor.altDeg - 15.1249)).toBeLessThan(0.00015);
  });

  // Meeus Example 23.a (theta Persei, 2028 Nov 13.19 TD): J2000 2h44m11.986s +49d13m42.48s, proper motion
  // +0.03425 s/yr, -0.0895"/yr; apparent place 2h46m14.390s +49d21m07.45s (nutation + annual aberration).
  // Measured 0.09" in RA cos Dec and 0.20" in Dec (our diurnal aberration adds up to 0.33").
  it('reproduces Meeus Example 23.a apparent place within 0.18 arcsec in RA cos Dec and 0.4 arcsec in Dec', () => {
    const jdTt = 2462088.69;
    const time = Astronomy.AstroTime.FromTerrestrialTime(jdTt - 2451545.0);
    const years = (jdTt - 2451545.0) / 365.25;
    const raDeg = hms(2, 44, 11.986 + 0.03425 * years) * 15;
    const decDeg = dms(49, 13, 42.48 - 0.0895 * years);
    const target = apparentInFrame(siteFrameAt({ latDeg: 0, lonDeg: 0, heightM: 0 }, time.date), raDeg, decDeg);
    const cosDec = Math.cos(target.decOfDateDeg * (Math.PI / 180));
    expect(Math.abs(target.raOfDateDeg - hms(2, 46, 14.39) * 15) * cosDec * 3600).toBeLessThan(0.18);
    expect(Math.abs(target.decOfDateDeg - dms(49, 21, 7.45)) * 3600).toBeLessThan(0.4);
  });

  // Cross-check with astronomy-engine's own path for a fixed star (DefineStar + Equator + Horizon), which
  // treats aberration differently for a distant fixed point; measured 0.26 arcsec on the sky.
  it('agrees with astronomy-engine star path within 0.5 arcsec on the sky', () => {
    Astronomy.DefineStar(Astronomy.Body.Star1, 10, 20, 1000);
    const when = new Date('2027-03-15T06:00:00Z');
    const observer = observerFromLocation(demoSite);
    const eq = Astronomy.Equator(Astronomy.Body.Star1, when, observer, true, true);
    const lib = Astronomy.Horizon(when, observer, eq.ra, eq.dec, 'normal');
    const ours = horizontalFromIcrs(demoSite, when, 150, 20);
    const dAlt = ours.altDeg - lib.altitude;
    const dAz = (ours.azDeg - lib.azimuth) * Math.cos(ours.altDeg * (Math.PI / 180));
    expect(Math.hypot(dAlt, dAz)).toBeLessThan(0.5 * ARCSEC_DEG);
  });

  it('computes the same horizon as astronomy-engine Horizon for coordinates of date, within 1e-6 deg', () => {
    for (const [iso, ra, dec] of [
      ['2027-03-15T06:00:00Z', 10, 20],
      ['2027-07-01T13:30:00Z', 250, -40],
      ['2026-12-24T22:10:00Z', 359, 75],
    ] as const) {
      const t = new Date(iso);
      const frame = siteFrameAt(demoSite, t);
      const ours = apparentFromEqd(frame, unitVectorFromRaDec(ra, dec), false);
      const lib = horizontalFromOfDate(demoSite, t, ra, dec, { refraction: false });
      expect(Math.abs(ours.altDeg - lib.altDeg)).toBeLessThan(1e-6);
      expect(Math.abs(ours.azDeg - lib.azDeg)).toBeLessThan(1e-6);
    }
  });

  it('puts the north celestial pole at the site latitude due north', () => {
    const hor = horizontalFromIcrs(demoSite, new Date('2027-03-15T06:00:00Z'), 0, 90, { refraction: false });
    // Precession since J2000 moves the ICRS pole ~0.15 deg from the pole of date.
    expect(Math.abs(hor.altDeg - demoSite.latDeg)).toBeLessThan(0.2);
  });

  it('raises the altitude by refraction, about 1 arcmin at 45 deg (Meeus ch. 16)', () => {
    const t = new Date('2027-03-15T06:00:00Z');
    const raw = horizontalFromIcrs(demoSite, t, 150, 20, { refraction: false });
    const bent = horizontalFromIcrs(demoSite, t, 150, 20);
    const expectedArcmin = 1.02 / Math.tan((raw.altDeg + 10.3 / (raw.altDeg + 5.11)) * (Math.PI / 180));
    expect((bent.altDeg - raw.altDeg) * 60).toBeCloseTo(expectedArcmin, 6);
  });

  it('refuses a declination outside -90..90', () => {
    expect(() => horizontalFromIcrs(demoSite, new Date(), 10, 95)).toThrow(/decDeg = 95/);
  });
});

describe('airmassKastenYoung', () => {
  // Kasten & Young (1989), Applied Optics 28, 4735, Table II (ISO standard atmosphere): relative optical air mass
  // 38.0868 at elevation 0, 10.3164 at 5 deg, 5.5841 at 10 deg; 1.9954 at 30 deg is from memory (unverified).
  // The eq. 3 fit measures 0.44 %, 0.10 %, 0.035 % and 0.056 % off the table (docs/accuracy.md); tolerances
  // are about twice that.
  it.each([
    { zenithDeg: 90, table: 38.0868, tolerance: 0.005 },
    { zenithDeg: 85, table: 10.3164, tolerance: 0.002 },
    { zenithDeg: 80, table: 5.5841, tolerance: 0.0007 },
    { zenithDeg: 60, table: 1.9954, tolerance: 0.001 },
  ])('is within the fit error of the table at zenith distance $zenithDeg deg', ({ zenithDeg, table, tolerance }) => {
    const x = airmassKastenYoung(90 - zenithDeg);
    expect(Math.abs(x / table - 1)).toBeLessThan(tolerance);
  });

  it('is 1 at the zenith within 1e-3 (the fit adds 0.0002)', () => {
    expect(Math.abs(airmassKastenYoung(90) - 1)).toBeLessThan(1e-3);
  });

  it('refuses an altitude below the horizon, naming the value', () => {
    expect(() => airmassKastenYoung(-1)).toThrow(/altitudeDeg = -1: airmass is defined/);
  });

  it('inverts: the altitude for airmass 2.4 gives airmass 2.4 back', () => {
    expect(airmassKastenYoung(altitudeForAirmassDeg(2.4))).toBeCloseTo(2.4, 8);
  });
});

describe('hour angle and parallactic angle', () => {
  it('is local sidereal time minus the apparent right ascension, wrapped to -12..12 h', () => {
    const t = new Date('2027-03-15T06:00:00Z');
    const frame = siteFrameAt(demoSite, t);
    const target = apparentInFrame(frame, 150, 20);
    let expected = frame.localSiderealTimeH - target.raOfDateDeg / 15;
    expected = ((expected + 12) % 24 + 24) % 24 - 12;
    expect(hourAngleH(demoSite, t, 150, 20)).toBeCloseTo(expected, 9);
  });

  it('is zero for the parallactic angle on the meridian south of the zenith', () => {
    expect(parallacticAngleFromHourAngleDeg(0, 10, 34)).toBeCloseTo(0, 12);
  });

  it('is positive west of the meridian and negative east of it (Meeus ch. 14)', () => {
    expect(parallacticAngleFromHourAngleDeg(2, 10, 34)).toBeGreaterThan(0);
    expect(parallacticAngleFromHourAngleDeg(-2, 10, 34)).toBeLessThan(0);
  });

  // Independent check: the angle at the target between the great circles to the pole and to the zenith,
  // from spherical trigonometry on the altitude/azimuth (sin q = sin A cos phi / cos h, A from north).
  it('agrees with the angle from the horizontal triangle within 0.01 deg', () => {
    const t = new Date('2027-03-15T06:00:00Z');
    const frame = siteFrameAt(demoSite, t);
    const target = apparentInFrame(frame, 150, 20, { refraction: false });
    const q = parallacticAngleDeg(demoSite, t, 150, 20);
    const rad = Math.PI / 180;
    const sinQ = (-Math.sin(target.azDeg * rad) * Math.cos(demoSite.latDeg * rad)) / Math.cos(target.decOfDateDeg * rad);
    expect(Math.abs(Math.sin(q * rad) - sinQ)).toBeLessThan(0.01 * rad);
  });
});
