import { describe, expect, it } from 'vitest';
import * as Astronomy from 'astronomy-engine';
import type { Site } from '../../src/config/schema.js';
import { loadConfig } from '../../src/config/load.js';
import { evaluateLimits, horizonMaskAltitudeDeg, requiredMoonSeparationDeg } from '../../src/sky/limits.js';
import { horizontalFromIcrs, localSiderealTimeH } from '../../src/sky/site.js';

const config = loadConfig({ env: {} });
const lanternRidge = config.sites.find((s) => s.id === 'lantern-ridge')!;
const kestrelHollow = config.sites.find((s) => s.id === 'kestrel-hollow')!;
const midnight = new Date('2027-03-16T07:00:00Z'); // deep in the dark at lantern-ridge (night of 2027-03-15)

describe('horizon mask', () => {
  it('interpolates linearly between configured points (lantern-ridge: 20 deg at 90, 32 deg at 135)', () => {
    expect(horizonMaskAltitudeDeg(lanternRidge.limits, 112.5)).toBeCloseTo(26, 9);
  });

  it('wraps through north', () => {
    const limits = { ...lanternRidge.limits, horizonMask: [{ azDeg: 10, minAltitudeDeg: 10 }, { azDeg: 350, minAltitudeDeg: 30 }] };
    expect(horizonMaskAltitudeDeg(limits, 0)).toBeCloseTo(20, 9);
  });
});

describe('Moon separation limit', () => {
  it('scales with the illuminated fraction and never drops below 3 deg', () => {
    expect(requiredMoonSeparationDeg(lanternRidge.limits, 0.5)).toBeCloseTo(15, 9);
    expect(requiredMoonSeparationDeg(lanternRidge.limits, 0.01)).toBe(3);
  });

  // The separation is measured from the site, so the fraction that scales it is the one seen from the site:
  // the topocentric phase angle (at the Moon, between the Sun and the observer), Meeus eq. 48.1 k = (1 + cos i)/2.
  it("scales with the illuminated fraction seen from the site, not from the Earth's centre (they differ by 0.0074 here)", () => {
    const t = new Date('2027-03-15T07:00:00Z'); // lantern-ridge, Moon 12.6 deg up, 0.95 deg of parallax
    const time = Astronomy.MakeTime(t);
    const site = Astronomy.ObserverVector(time, new Astronomy.Observer(34.21, -107.62, 2310), false);
    const moon = Astronomy.GeoMoon(time);
    const sun = Astronomy.GeoVector(Astronomy.Body.Sun, time, true);
    const toSun = new Astronomy.Vector(sun.x - moon.x, sun.y - moon.y, sun.z - moon.z, time);
    const toSite = new Astronomy.Vector(site.x - moon.x, site.y - moon.y, site.z - moon.z, time);
    const topocentric = (1 + Math.cos((Astronomy.AngleBetween(toSun, toSite) * Math.PI) / 180)) / 2;
    const geocentric = Astronomy.Illumination(Astronomy.Body.Moon, time).phase_fraction;
    expect(Math.abs(topocentric - geocentric)).toBeGreaterThan(0.007);
    const report = evaluateLimits(lanternRidge, t, { raDeg: 186, decDeg: 30 });
    expect(Math.abs(report.moon.illuminatedFraction - topocentric)).toBeLessThan(1e-4);
    const moonCheck = report.checks.find((c) => c.limit === 'moonSeparation')!;
    expect(moonCheck.margin).toBeCloseTo(report.moon.separationDeg - 30 * topocentric, 2);
  });

  it('is the configured value when it does not scale', () => {
    expect(requiredMoonSeparationDeg({ ...lanternRidge.limits, moonSeparationScalesWithIllumination: false }, 0.1)).toBe(30);
  });
});

describe('evaluateLimits', () => {
  it('passes a target high in the dark sky and reports each margin with its unit', () => {
    // RA 186 deg is about 1 h east of the meridian then (LST ~ 11.4 h), high and far from the Moon (RA ~ 5 h).
    const report = evaluateLimits(lanternRidge, midnight, { raDeg: 186, decDeg: 30, raRateArcsecPerS: 0.1, decRateArcsecPerS: -0.05 });
    expect(report.failing).toEqual([]);
    const alt = report.checks.find((c) => c.limit === 'minAltitude')!;
    expect(alt.unit).toBe('deg');
    expect(alt.margin).toBeCloseTo(report.target.altDeg - 25, 9);
    expect(alt.detail).toMatch(/^altitude \d+\.\d deg, limit 25 deg$/);
    expect(report.checks.find((c) => c.limit === 'maxRate')!.unit).toBe('arcsec/s');
  });

  it('includes each detail when serialised to JSON', () => {
    const report = evaluateLimits(lanternRidge, midnight, { raDeg: 186, decDeg: 30 });
    const json = JSON.parse(JSON.stringify(report)) as { checks: Array<{ limit: string; detail: string; unit: string }> };
    expect(json.checks.find((c) => c.limit === 'declination')).toEqual({
      limit: 'declination',
      ok: true,
      margin: 59,
      unit: 'deg',
      detail: 'declination 30.0 deg, allowed -35..89 deg',
    });
  });

  it('uses the same apparent altitude as horizontalFromIcrs', () => {
    const report = evaluateLimits(lanternRidge, midnight, { raDeg: 186, decDeg: 30 });
    expect(report.target.altDeg).toBeCloseTo(horizontalFromIcrs(lanternRidge.location, midnight, 186, 30).altDeg, 9);
  });

  it('fails the night limit in daylight with the Sun altitude in the detail', () => {
    const report = evaluateLimits(lanternRidge, new Date('2027-03-16T19:00:00Z'), { raDeg: 186, decDeg: 30 });
    const night = report.checks.find((c) => c.limit === 'night')!;
    expect(night.ok).toBe(false);
    expect(night.detail).toMatch(/^Sun at \d+\.\d deg, night needs it below -12 deg$/);
  });

  it('fails Sun avoidance for a target next to the Sun, whatever else holds', () => {
    // The Sun is near RA 355 deg, Dec -2 deg in mid-March.
    const report = evaluateLimits(lanternRidge, midnight, { raDeg: 355, decDeg: -2 });
    expect(report.failing).toContain('sunAvoidance');
  });

  it('fails the declination range outside -35..89 deg', () => {
    const report = evaluateLimits(lanternRidge, midnight, { raDeg: 186, decDeg: -50 });
    expect(report.checks.find((c) => c.limit === 'declination')).toMatchObject({ ok: false, margin: -15, unit: 'deg' });
  });

  it('fails the rate limit above 60 arcsec/s with the rate in the detail', () => {
    const report = evaluateLimits(lanternRidge, midnight, { raDeg: 186, decDeg: 30, raRateArcsecPerS: 60, decRateArcsecPerS: 11 });
    const rate = report.checks.find((c) => c.limit === 'maxRate')!;
    expect(rate.ok).toBe(false);
    expect(rate.margin).toBeCloseTo(60 - Math.hypot(60, 11), 9);
  });

  it('fails the hour-angle limit 6.5 h west of the meridian (allowed +-5.5 h)', () => {
    const lstH = localSiderealTimeH(lanternRidge.location, midnight);
    const report = evaluateLimits(lanternRidge, midnight, { raDeg: (((lstH - 6.5) * 15) % 360 + 360) % 360, decDeg: 60 });
    const ha = report.checks.find((c) => c.limit === 'hourAngle')!;
    expect(ha.ok).toBe(false);
    expect(ha.unit).toBe('h');
    expect(ha.margin).toBeCloseTo(-1, 1);
  });

  it('applies the zenith keep-out only to alt-az mounts', () => {
    const zenithish = (site: Site) => {
      const t = new Date('2027-03-16T15:00:00Z'); // night at kestrel-hollow (lon 138 E)
      return evaluateLimits(site, t, { raDeg: 0, decDeg: 0 }).checks.map((c) => c.limit);
    };
    expect(zenithish(kestrelHollow)).toContain('zenithKeepOut');
    expect(zenithish(lanternRidge)).not.toContain('zenithKeepOut');
  });

  it('refuses a non-finite declination, naming the field', () => {
    expect(() => evaluateLimits(lanternRidge, midnight, { raDeg: 10, decDeg: Number.POSITIVE_INFINITY })).toThrow(/target\.decDeg = Infinity/);
  });
});
