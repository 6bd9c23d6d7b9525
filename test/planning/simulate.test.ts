import { describe, expect, it } from 'vitest';
import { parseNotice, type Notice } from '../../src/intake/notice.js';
import { elementsFromNoticeOrbit } from '../../src/commands/ephemeris.js';
import { ephemerisFromElements } from '../../src/orbit/ephemeris.js';
import { estimateFromElements } from '../../src/planning/estimate-from-elements.js';
import { planObject } from '../../src/planning/plan-object.js';
import { SIMULATED_SENDER, simulateNight } from '../../src/planning/simulate.js';
import { angularSeparationDeg } from '../../src/sky/site.js';
import { demoSites } from './scenario.js';

const now = new Date('2026-12-02T04:00:00Z');
const simulated = simulateNight({ now, count: 7, seed: 1, withOrbit: true });
const notices: Notice[] = simulated.map((s) => {
  const parsed = parseNotice(JSON.parse(JSON.stringify(s.notice)), { now, checkAge: true });
  if (!parsed.ok) throw new Error(`invalid: ${JSON.stringify(parsed.issues)}`);
  return parsed.notice;
});

describe('simulateNight', () => {
  it('makes notices that pass the intake checks against the clock, observed before it', () => {
    expect(notices).toHaveLength(7);
    for (const n of notices) {
      expect(n.sender).toBe(SIMULATED_SENDER);
      for (const o of n.observations ?? []) expect(Date.parse(o.t)).toBeLessThan(now.getTime());
    }
  });

  it('gives every object its own designation', () => {
    expect(new Set(notices.map((n) => n.objectId)).size).toBe(notices.length);
  });

  it('gives the same notices for the same seed and clock, others for another seed', () => {
    expect(JSON.stringify(simulateNight({ now, count: 7, seed: 1, withOrbit: true }))).toBe(JSON.stringify(simulated));
    expect(JSON.stringify(simulateNight({ now, count: 7, seed: 2, withOrbit: true }))).not.toBe(JSON.stringify(simulated));
  });

  it('has astrometry consistent with its orbit block within 2 arcsec (0.3 arcsec noise, 6.7 sigma)', () => {
    for (const n of notices) {
      const { elements, epochTt } = elementsFromNoticeOrbit(n.orbit!);
      const observer = { latDeg: n.observer.lat, lonDeg: n.observer.lon, heightM: n.observer.height };
      const obs = n.observations!;
      const rows = ephemerisFromElements(elements, epochTt, observer, obs.map((o) => new Date(o.t)));
      rows.forEach((row, k) => expect(angularSeparationDeg(row.ra, row.dec, obs[k]!.ra, obs[k]!.dec) * 3600, `${n.objectId} obs ${k}`).toBeLessThan(2));
    }
  });

  it('mixes objects the demo sites can observe tonight with ones they cannot, for the stated reasons', () => {
    const sites = demoSites();
    // One of each: ordinary (observable), too faint, too far south; the rest are planned in test/commands.
    const picked = [1, 2, 4];
    const plans = picked.map((k) => {
      const n = notices[k]!;
      const { elements, epochTt } = elementsFromNoticeOrbit(n.orbit!);
      const estimate = estimateFromElements({ objectId: n.objectId, firstObservedAt: n.observations![0]!.t, elements, epochTt, hMag: n.orbit!.H ?? null });
      return { kind: simulated[k]!.kind, plan: planObject({ estimate, sites, now, horizonH: 36 }) };
    });
    const ordinary = plans.find((p) => p.kind === 'ordinary')!;
    for (const s of ordinary.plan.sites) expect(s.requests.map((r) => r.kind), s.siteId).toContain('photometry');
    const south = plans.find((p) => p.kind === 'too-far-south')!;
    for (const s of south.plan.sites) {
      expect(s.requests).toEqual([]);
      expect(s.reasons.join(' ')).toContain('declination');
    }
    const faint = plans.find((p) => p.kind === 'too-faint')!;
    for (const s of faint.plan.sites) expect(s.reasons.some((r) => r.startsWith('photometry: too faint'))).toBe(true);
  }, 30_000);

  it('leaves the orbit block out unless asked, keeping the same tracklet', () => {
    const plain = simulateNight({ now, count: 7, seed: 1 });
    plain.forEach((s, k) => {
      expect(s.notice['orbit']).toBeUndefined();
      expect(s.notice['observations']).toEqual(simulated[k]!.notice['observations']);
    });
  });

  it('refuses a count outside 1..200, naming it', () => {
    expect(() => simulateNight({ now, count: 0, seed: 1 })).toThrow(/count/);
  });
});
