import { describe, expect, it } from 'vitest';
import { planSchema } from '../../src/api/plan-schema.js';
import { loadConfig } from '../../src/config/load.js';
import { runAssessTask } from '../../src/jobs/assess-worker.js';
import { simulateNight } from '../../src/planning/simulate.js';

describe('the documented plan schema', () => {
  it('accepts the plans the planner writes, so the OpenAPI document describes what the queue gets', () => {
    const config = loadConfig({ env: {} });
    const now = new Date('2027-03-04T06:00:00Z');
    let checked = 0;
    for (const s of simulateNight({ now, count: 3, seed: 8 })) {
      const n = s.notice as { objectId: string; observer: { lat: number; lon: number; height: number }; observations: { t: string; ra: number; dec: number; sigma: number; mag?: number; band?: string }[] };
      const out = runAssessTask({
        input: {
          objectId: n.objectId,
          nowIso: now.toISOString(),
          orbit: null,
          observations: n.observations.map((o) => ({ t: o.t, raDeg: o.ra, decDeg: o.dec, sigmaArcsec: o.sigma, mag: o.mag ?? null, band: o.band ?? null, observer: { latDeg: n.observer.lat, lonDeg: n.observer.lon, heightM: n.observer.height } })),
        },
        sites: config.sites,
        horizonH: 36,
        members: 200,
        weights: {},
      });
      for (const r of out.requests) {
        const parsed = planSchema.safeParse(r.body);
        expect(parsed.success, JSON.stringify(parsed.error?.issues.slice(0, 3))).toBe(true);
        checked += 1;
      }
    }
    expect(checked).toBeGreaterThan(0);
  });
});
