import { describe, expect, it } from 'vitest';
import type { Site } from '../../src/config/schema.js';
import { planObject, type PlannedRequest } from '../../src/planning/plan-object.js';
import { NOW, northernSite, testObject, type TestObject } from './scenario.js';

// Two invented circumpolar objects seen from the northern test site (lat 50): Dec 70 keeps them above 30 deg.
const place = { timeUtc: NOW, raDeg: 110, decDeg: 70, radialKmPerS: 2, transverseKmPerS: 5, motionPaDeg: 60 };
// H 26.5 is a likely diameter of 20 m (albedo range 0.05-0.25); at 0.005 au it is about V 15.
const small = testObject('TM27B01', { ...place, distanceAu: 0.005 }, 26.5, '2027-01-10T15:00:00Z');
// H 20.6 is a likely diameter of 300 m.
const large = testObject('TM27B02', { ...place, distanceAu: 0.05 }, 20.6, '2027-01-10T15:00:00Z');

function photometry(object: TestObject, site: Site, horizonH = 36): PlannedRequest[] {
  return planObject({ estimate: object.estimate, sites: [site], now: NOW, horizonH }).sites[0]!.requests.filter((r) => r.kind === 'photometry');
}

describe('light curves sized for their purpose', () => {
  it('gives a 20 m object one light curve of about an hour (two cycles of half an hour), not the whole night', () => {
    const [r, ...rest] = photometry(small, northernSite());
    expect(rest).toEqual([]);
    const cadenceS = r!.body.sequence.cadenceS!;
    expect(r!.durationS).toBeLessThanOrEqual(3600 + 1);
    expect(r!.durationS).toBeGreaterThan(3600 - cadenceS - 1);
    expect(Date.parse(r!.windowEnd) - Date.parse(r!.windowStart)).toBeGreaterThan(4 * 3_600_000);
    expect(r!.body.lightCurve).toMatchObject({ longestPlausiblePeriodS: 1800, wantedS: 3600, part: 1, parts: 1, followOnS: 0 });
  });

  it('gives a 300 m object two hours tonight and a two-hour follow-on in a later night', () => {
    const [first, second, ...rest] = photometry(large, northernSite());
    expect(rest).toEqual([]);
    for (const r of [first!, second!]) {
      expect(r.durationS).toBeLessThanOrEqual(7200 + 1);
      expect(r.durationS).toBeGreaterThan(7200 - r.body.sequence.cadenceS! - 1);
    }
    expect(first!.body.lightCurve).toMatchObject({ part: 1, parts: 2, followOnS: 7200 });
    expect(second!.body.lightCurve).toMatchObject({ part: 2, parts: 2, followOnS: 0 });
    expect(Date.parse(second!.windowStart)).toBeGreaterThanOrEqual(Date.parse(first!.windowEnd));
    expect(second!.night).not.toBe(first!.night);
  });

  it("keeps to the site's lightCurve.maxMinutes", () => {
    const site: Site = { ...northernSite(), lightCurve: { maxMinutes: 45 } };
    const [r] = photometry(small, site);
    expect(r!.durationS).toBeLessThanOrEqual(45 * 60 + 1);
    expect(r!.body.lightCurve?.boundsS).toEqual({ min: 1800, max: 2700 });
  });

  it('scores room against the sized length: window / (2 x sequence), clamped to 1 (docs/scoring.md)', () => {
    const [r] = photometry(small, northernSite());
    const room = r!.body.score.factors.find((f) => f.name === 'feasibility')!.parts.find((p) => p.name === 'room')!.value;
    const windowS = (Date.parse(r!.windowEnd) - Date.parse(r!.windowStart)) / 1000;
    expect(room).toBeCloseTo(Math.min(1, windowS / (2 * r!.body.lightCurve!.sequenceS)), 3);
    expect(room).toBe(1);
  });
});
