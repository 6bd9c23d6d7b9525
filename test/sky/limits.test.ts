import { describe, expect, it } from 'vitest';
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
