import { Body, Equator, Illumination, MakeTime, Observer, SearchMoonPhase } from 'astronomy-engine';
import { describe, expect, it } from 'vitest';
import type { Site } from '../../src/config/schema.js';
import { planObject, type ObjectPlan } from '../../src/planning/plan-object.js';
import { SLACK, independentLimitFailures } from '../sky/independent-limits.js';
import { angularSeparationDeg } from '../../src/sky/site.js';
import { NOW, demoSites, exactRows, northernSite, testObject, type TestObject } from './scenario.js';

const MIN = 60_000;
const HORIZON_H = 24;

// Anti-solar RA on 2027-01-10 is about 110 deg (the Sun at RA ~ 292 deg; from memory, checked by the phase angle below).
const bright = testObject(
  'TM27A01',
  { timeUtc: NOW, raDeg: 110, decDeg: 70, distanceAu: 0.05, radialKmPerS: 2, transverseKmPerS: 5, motionPaDeg: 60 },
  20,
  '2027-01-10T15:00:00Z',
);

function plan(object: TestObject, site: Site, now = NOW, horizonH = HORIZON_H): ObjectPlan {
  return planObject({ estimate: object.estimate, sites: [site], now, horizonH });
}

/**
 * The site's limits at a time re-evaluated with astronomy-engine directly (test/sky/independent-limits.ts), the
 * target from the orbit module (rates included). Inside a window: ok within the re-check's slack; outside it:
 * failing with no slack.
 */
function limitsAt(object: TestObject, site: Site, tMs: number, slack = SLACK) {
  const row = exactRows(object, site, [new Date(tMs)])[0]!;
  const failures = independentLimitFailures(site, new Date(tMs), { raDeg: row.ra, decDeg: row.dec, raRateArcsecPerS: row.raRate, decRateArcsecPerS: row.decRate }, slack);
  return { ok: failures.length === 0, failures };
}
const NO_SLACK = { deg: 0, h: 0, rate: 0 };

describe('planObject: a bright circumpolar object at a northern site', () => {
  const site = northernSite();
  const result = plan(bright, site);
  const sitePlan = result.sites[0]!;

  it('yields photometry, colours and spectrum, in that order', () => {
    expect(sitePlan.requests.map((r) => r.kind)).toEqual(['photometry', 'colours', 'spectrum']);
  });

  it('is circumpolar and bright by the orbit module alone (the scenario is what it claims)', () => {
    const rows = exactRows(bright, site, Array.from({ length: 25 }, (_, k) => new Date(NOW.getTime() + k * 3_600_000)));
    // Lowest altitude = latitude - (90 - Dec) = 30 deg for Dec 70 at latitude 50 (spherical astronomy).
    expect(Math.min(...rows.map((r) => r.alt))).toBeGreaterThan(25);
    expect(Math.max(...rows.map((r) => r.mag ?? 99))).toBeLessThan(16);
  });

  it('puts every request window inside one of the sky windows', () => {
    for (const r of sitePlan.requests) {
      const inside = sitePlan.windows.some((w) => Date.parse(w.start) <= Date.parse(r.windowStart) && Date.parse(r.windowEnd) <= Date.parse(w.end));
      expect(inside, `${r.kind} ${r.windowStart}..${r.windowEnd}`).toBe(true);
      expect(Date.parse(r.recommendedStart)).toBeGreaterThanOrEqual(Date.parse(r.windowStart));
      expect(Date.parse(r.recommendedStart) + r.durationS * 1000).toBeLessThanOrEqual(Date.parse(r.windowEnd) + 1000);
    }
  });

  it('gives the non-sidereal rates of the orbit module at the recommended start, within 1e-3 arcsec/s', () => {
    for (const r of sitePlan.requests) {
      const row = exactRows(bright, site, [new Date(r.recommendedStart)])[0]!;
      expect(r.body.tracking.raRateArcsecPerS).toBeCloseTo(row.raRate, 3);
      expect(r.body.tracking.decRateArcsecPerS).toBeCloseTo(row.decRate, 3);
      expect(r.body.tracking.mode).toBe('non-sidereal');
    }
  });

  it('tabulates the ephemeris every 5 minutes from window start to end, matching the orbit module within 0.1 arcsec', () => {
    const r = sitePlan.requests[0]!;
    const rows = r.body.ephemeris.rows;
    expect(rows[0]!.t).toBe(r.windowStart);
    expect(rows.at(-1)!.t).toBe(r.windowEnd);
    for (let k = 1; k < rows.length - 1; k++) expect(Date.parse(rows[k]!.t) - Date.parse(rows[k - 1]!.t)).toBe(5 * MIN);
    const check = rows[Math.floor(rows.length / 2)]!;
    const exact = exactRows(bright, site, [new Date(check.t)])[0]!;
    expect(angularSeparationDeg(check.ra, check.dec, exact.ra, exact.dec) * 3600).toBeLessThan(0.1);
    expect(check.unc).not.toBeNull();
  });

  it('carries a score from 0 to 100 with the four named factors, each with a sentence', () => {
    for (const r of sitePlan.requests) {
      expect(r.score).toBeGreaterThanOrEqual(0);
      expect(r.score).toBeLessThanOrEqual(100);
      expect(r.body.score.factors.map((f) => f.name)).toEqual(['urgency', 'value', 'feasibility', 'freshness']);
      for (const f of r.body.score.factors) expect(f.why.length).toBeGreaterThan(10);
      expect(r.body.score.total).toBe(r.score);
    }
  });

  it('states the limiting V of each request and scores its margin as (limit - V) / 2', () => {
    for (const r of sitePlan.requests) {
      const { vMag, limitingVMag } = r.body.target;
      expect(limitingVMag!).toBeGreaterThan(vMag);
      const part = r.body.score.factors.find((f) => f.name === 'feasibility')!.parts.find((p) => p.name === 'brightnessMargin')!;
      expect(part.value).toBeCloseTo(Math.min(1, (limitingVMag! - vMag) / 2), 2);
    }
  });

  it('refuses a horizon out of range and an invalid clock, naming them', () => {
    expect(() => planObject({ estimate: bright.estimate, sites: [site], now: NOW, horizonH: 0 })).toThrow(/horizonH/);
    expect(() => planObject({ estimate: bright.estimate, sites: [site], now: new Date('x'), horizonH: 24 })).toThrow(/now/);
    expect(() => planObject({ estimate: bright.estimate, sites: [], now: NOW, horizonH: 24 })).toThrow(/sites/);
  });

  it('gives the same plan for the same inputs', () => {
    expect(JSON.stringify(plan(bright, site))).toBe(JSON.stringify(result));
  });
});

describe('planObject: no request, with the reason', () => {
  it('an object below the horizon all night gets none and the altitude reason', () => {
    const southern = testObject('TM27A02', { timeUtc: NOW, raDeg: 110, decDeg: -70, distanceAu: 0.05, radialKmPerS: 2, transverseKmPerS: 5, motionPaDeg: 60 }, 20, '2027-01-10T15:00:00Z');
    const site = northernSite();
    const sitePlan = plan(southern, site).sites[0]!;
    expect(sitePlan.requests).toEqual([]);
    expect(sitePlan.windows).toEqual([]);
    const reason = sitePlan.reasons.find((r) => r.startsWith('never above 20 deg'));
    expect(reason, sitePlan.reasons.join(' | ')).toBeDefined();
    // Highest altitude = 90 - |latitude - Dec| = -30 deg at upper culmination (spherical astronomy); the reason states it.
    const highest = Number(/highest altitude (-?[\d.]+) deg/.exec(reason!)?.[1]);
    expect(highest).toBeLessThan(-25);
    expect(highest).toBeGreaterThan(-31);
    expect(reason).toContain(`next ${HORIZON_H} h`);
  });

  it('an object faster than the mount limit gets none and the rate reason with both numbers', () => {
    const site = northernSite({ maxRateArcsecPerS: 0.05 });
    const sitePlan = plan(bright, site).sites[0]!;
    expect(sitePlan.requests).toEqual([]);
    const reason = sitePlan.reasons.find((r) => r.startsWith('moves'));
    expect(reason, sitePlan.reasons.join(' | ')).toMatch(/^moves [\d.]+ arcsec\/s at its slowest in the next 24 h, mount limit 0.05 arcsec\/s$/);
    // The slowest rate, independently: hourly rows of the orbit module (5 km/s across 0.05 au is 0.14 arcsec/s).
    const rows = exactRows(bright, site, Array.from({ length: 25 }, (_, k) => new Date(NOW.getTime() + k * 3_600_000)));
    const slowest = Math.min(...rows.map((r) => Math.hypot(r.raRate, r.decRate)));
    const stated = Number(/^moves ([\d.]+)/.exec(reason!)?.[1]);
    expect(Math.abs(stated - slowest) / slowest).toBeLessThan(0.03);
  });

  it('an object too faint for every kind says how faint it is and the limit', () => {
    const faint = testObject('TM27A03', { timeUtc: NOW, raDeg: 110, decDeg: 70, distanceAu: 0.8, radialKmPerS: 2, transverseKmPerS: 5, motionPaDeg: 60 }, 24, '2027-01-10T15:00:00Z');
    const sitePlan = plan(faint, northernSite()).sites[0]!;
    expect(sitePlan.requests).toEqual([]);
    const reason = sitePlan.reasons.find((r) => r.startsWith('photometry: too faint'));
    expect(reason, sitePlan.reasons.join(' | ')).toMatch(/^photometry: too faint: V [\d.]+ at best, limit [\d.]+/);
    const [, v, limit] = /V ([\d.]+) at best, limit ([\d.]+)/.exec(reason!)!.map(Number);
    expect(v!).toBeGreaterThan(limit!);
  });
});

describe('planObject: urgency', () => {
  /** The same object, its magnitude fading by `magPerH` after NOW. */
  function fading(magPerH: number): TestObject {
    const base = testObject('TM27A04', { timeUtc: NOW, raDeg: 110, decDeg: 70, distanceAu: 0.15, radialKmPerS: 2, transverseKmPerS: 5, motionPaDeg: 60 }, 20.5, '2027-01-10T15:00:00Z');
    return {
      ...base,
      estimate: {
        ...base.estimate,
        ephemeris: (location, times) =>
          base.estimate.ephemeris(location, times).map((row) => ({
            ...row,
            mag: row.mag === null ? null : row.mag + magPerH * Math.max(0, (Date.parse(row.t) - NOW.getTime()) / 3_600_000),
          })),
      },
    };
  }

  it('of two objects alike, the one fading below the limit sooner scores higher', () => {
    const site = northernSite();
    const steady = plan(fading(0), site).sites[0]!.requests.find((r) => r.kind === 'photometry')!;
    const fades = plan(fading(0.6), site).sites[0]!.requests.find((r) => r.kind === 'photometry')!;
    expect(fades.score).toBeGreaterThan(steady.score);
    const urgency = (r: typeof steady) => r.body.score.factors.find((f) => f.name === 'urgency')!.value;
    expect(urgency(fades)).toBeGreaterThan(urgency(steady));
    // It fades below the light-curve limit within the night, so its request window is shorter.
    expect(Date.parse(fades.windowEnd)).toBeLessThan(Date.parse(steady.windowEnd));
  });
});

describe('planObject: the Moon', () => {
  // A full Moon found by astronomy-engine (Meeus ch. 49 phases), and an object moving toward it.
  const fullMoon = SearchMoonPhase(180, MakeTime(new Date('2027-01-15T00:00:00Z')), 40)!.date;
  const site = northernSite({ minMoonSeparationDeg: 30 });
  const observer = new Observer(site.location.latDeg, site.location.lonDeg, site.location.heightM);
  // The crossing time: local midnight-ish of the full-Moon night (lon 10 E: 23 UTC).
  const crossing = new Date(Date.UTC(fullMoon.getUTCFullYear(), fullMoon.getUTCMonth(), fullMoon.getUTCDate(), 23, 0, 0));
  const now = new Date(crossing.getTime() - 6 * 3_600_000);
  const moon = Equator(Body.Moon, crossing, observer, false, false);
  const moonRaDeg = moon.ra * 15;
  // 33 deg north of the Moon, moving south (toward it) at about 5 deg/h: 0.003 au, 11 km/s across.
  const object = testObject(
    'TM27A05',
    { timeUtc: crossing, raDeg: moonRaDeg, decDeg: moon.dec + 33, distanceAu: 0.003, radialKmPerS: -1, transverseKmPerS: 11, motionPaDeg: 180 },
    24.5,
    now.toISOString(),
  );
  const withMoon = planObject({ estimate: object.estimate, sites: [site], now, horizonH: 12 }).sites[0]!;
  const noMoonLimit = planObject({ estimate: object.estimate, sites: [northernSite({ minMoonSeparationDeg: 0 }, 'test-moor-b')], now, horizonH: 12 }).sites[0]!;

  it('is a bright Moon (astronomy-engine illuminated fraction above 0.95)', () => {
    expect(Illumination(Body.Moon, crossing).phase_fraction).toBeGreaterThan(0.95);
  });

  it('trims the window where the object comes within the separation limit', () => {
    const closing = withMoon.windows.find((w) => w.closesBecause.startsWith('Moon separation falls below'));
    expect(closing, JSON.stringify(withMoon.windows)).toBeDefined();
    const total = (ws: typeof withMoon.windows) => ws.reduce((s, w) => s + w.durationMin, 0);
    expect(total(withMoon.windows)).toBeLessThan(total(noMoonLimit.windows) - 30);
    // Independently (astronomy-engine's topocentric Moon, the orbit module's object): 30 deg is crossed at that edge.
    const endMs = Date.parse(closing!.end);
    const sepAt = (tMs: number) => {
      const row = exactRows(object, site, [new Date(tMs)])[0]!;
      const m = Equator(Body.Moon, new Date(tMs), observer, false, false);
      return angularSeparationDeg(row.ra, row.dec, m.ra * 15, m.dec);
    };
    expect(sepAt(endMs - 2 * MIN)).toBeGreaterThan(30);
    expect(sepAt(endMs + 2 * MIN)).toBeLessThan(30);
  });

  it('keeps every request out of the Moon limit', () => {
    expect(withMoon.requests.length).toBeGreaterThan(0);
    for (const r of withMoon.requests) {
      for (const row of r.body.ephemeris.rows) {
        const m = Equator(Body.Moon, new Date(row.t), observer, false, false);
        expect(angularSeparationDeg(row.ra, row.dec, m.ra * 15, m.dec)).toBeGreaterThan(29.9);
      }
    }
  });
});

describe('planObject: every window edge re-evaluated independently', () => {
  const cases: { name: string; object: TestObject; site: Site; edge?: string }[] = [
    { name: 'circumpolar', object: bright, site: northernSite() },
    {
      name: 'rising and setting, behind a mask, with an hour-angle limit',
      object: testObject('TM27A06', { timeUtc: NOW, raDeg: 120, decDeg: 15, distanceAu: 0.02, radialKmPerS: -3, transverseKmPerS: 8, motionPaDeg: 200 }, 23, '2027-01-10T15:00:00Z'),
      site: northernSite({
        hourAngleH: { min: -4, max: 4 },
        horizonMask: [{ azDeg: 0, minAltitudeDeg: 20 }, { azDeg: 90, minAltitudeDeg: 35 }, { azDeg: 180, minAltitudeDeg: 25 }, { azDeg: 270, minAltitudeDeg: 20 }],
      }),
    },
    {
      name: 'an alt-az demo site, through the zenith keep-out',
      // Dec 36 passes within a degree of the zenith at latitude 36.08 (kestrel-hollow).
      object: testObject('TM27A10', { timeUtc: NOW, raDeg: 115, decDeg: 36, distanceAu: 0.03, radialKmPerS: 1, transverseKmPerS: 4, motionPaDeg: 90 }, 22, '2027-01-10T15:00:00Z'),
      site: demoSites()[1]!,
      edge: 'zenith keep-out',
    },
  ];
  for (const { name, object, site, edge } of cases) {
    it(`${name}: one minute inside each edge passes every limit, one minute outside fails one`, () => {
      const sitePlan = plan(object, site, NOW, 36).sites[0]!;
      expect(sitePlan.windows.length).toBeGreaterThan(0);
      expect(sitePlan.requests.length).toBeGreaterThan(0);
      if (edge !== undefined) expect(sitePlan.windows.some((w) => w.opensBecause.includes(edge) || w.closesBecause.includes(edge))).toBe(true);
      for (const w of sitePlan.windows) {
        const s = Date.parse(w.start);
        const e = Date.parse(w.end);
        if (e - s > 2 * MIN) {
          expect(limitsAt(object, site, s + MIN).ok, `${w.start} + 1 min`).toBe(true);
          expect(limitsAt(object, site, e - MIN).ok, `${w.end} - 1 min`).toBe(true);
        }
        if (w.opensBecause !== 'start of the requested interval') expect(limitsAt(object, site, s - MIN, NO_SLACK).ok, `${w.start} - 1 min`).toBe(false);
        if (w.closesBecause !== 'end of the requested interval') expect(limitsAt(object, site, e + MIN, NO_SLACK).ok, `${w.end} + 1 min`).toBe(false);
      }
      for (const r of sitePlan.requests) {
        for (const t of [Date.parse(r.windowStart), Date.parse(r.recommendedStart), Date.parse(r.windowEnd)]) {
          expect(limitsAt(object, site, t).ok, `${r.kind} at ${new Date(t).toISOString()}`).toBe(true);
        }
      }
    });
  }
});

describe('planObject: the uncertainty against the fields', () => {
  const site = northernSite();
  const place = { timeUtc: NOW, raDeg: 110, decDeg: 70, distanceAu: 0.05, radialKmPerS: 2, transverseKmPerS: 5, motionPaDeg: 60 };

  it('a 3-sigma region larger than the imager field gets a light curve with a search pattern, and no colours or spectrum yet', () => {
    // 1-sigma 200 arcsec: 3-sigma region 1200 arcsec across, the field 798 arcsec.
    const loose = testObject('TM27A07', place, 20, '2027-01-10T15:00:00Z', { majorArcsec: 200, growthArcsecPerH: 0, axisRatio: 0.3 });
    const sitePlan = plan(loose, site).sites[0]!;
    expect(sitePlan.requests.map((r) => r.kind)).toEqual(['photometry']);
    const pattern = sitePlan.requests[0]!.body.searchPattern!;
    expect(pattern.pointings.length).toBeGreaterThan(1);
    expect(pattern.pointings.length).toBeLessThanOrEqual(9);
    expect(sitePlan.reasons.some((r) => r.startsWith('colours: 3-sigma region 1200 arcsec across exceeds the imager field 798 arcsec'))).toBe(true);
  });

  it('a 3-sigma region needing more than nine pointings needs astrometry first', () => {
    const lost = testObject('TM27A08', place, 20, '2027-01-10T15:00:00Z', { majorArcsec: 3000, growthArcsecPerH: 0, axisRatio: 0.5 });
    const sitePlan = plan(lost, site).sites[0]!;
    expect(sitePlan.requests).toEqual([]);
    expect(sitePlan.reasons.find((r) => r.startsWith('photometry:'))).toMatch(/3-sigma region 18000 arcsec across exceeds the imager field 798 arcsec; covering it would take \d+ pointings \(more than 9\): needs astrometry first/);
  });

  it('a region inside the imager field but wider than the acquisition field gets no spectrum', () => {
    // 3-sigma region 300 arcsec across: fits 798, not 180.
    const mid = testObject('TM27A09', place, 20, '2027-01-10T15:00:00Z', { majorArcsec: 50, growthArcsecPerH: 0, axisRatio: 0.3 });
    const sitePlan = plan(mid, site).sites[0]!;
    expect(sitePlan.requests.map((r) => r.kind)).toEqual(['photometry', 'colours']);
    expect(sitePlan.reasons).toContain('spectrum: 3-sigma region 300 arcsec across exceeds the acquisition field 180 arcsec');
  });
});
