import { describe, expect, it } from 'vitest';
import { AstroTime, Body, GravitySimulator, HelioState, HelioVector, StateVector } from 'astronomy-engine';
import { stateFromPerihelionElements, type HeliocentricState } from '../../src/orbit/elements.js';
import { ensemblePlaces, streamEnsemblePlacesForSites } from '../../src/orbit/ephemeris.js';
import { propagateEnsemble } from '../../src/orbit/propagate.js';
import { MOON_INDEX, PerturberTable } from '../../src/orbit/perturbers.js';
import { referenceDirection, referenceRk4 } from './reference-integration.js';
import { OrbitInputError } from '../../src/orbit/errors.js';
import { ttFromTtIso, ttFromUtc, utcFromTt } from '../../src/orbit/time.js';

const ARCSEC_PER_RAD = (180 / Math.PI) * 3600;
const T = (tt: number) => AstroTime.FromTerrestrialTime(tt);
const site = { latDeg: 34.21, lonDeg: -107.62, heightM: 2310 }; // invented demo site

type V3 = [number, number, number];
const angleArcsec = (a: V3, b: V3) => {
  const c: V3 = [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]];
  return Math.atan2(Math.hypot(...c), a[0] * b[0] + a[1] * b[1] + a[2] * b[2]) * ARCSEC_PER_RAD;
};
const stateOf = (s: StateVector, tt: number): HeliocentricState => ({ tt, x: s.x, y: s.y, z: s.z, vx: s.vx, vy: s.vy, vz: s.vz });

/** Largest angle, seen from Earth's centre, between a propagated test particle and the library's planet, over `days`. */
function planetTrackingErrorArcsec(body: Body, startIso: string, days: number): number {
  const t0 = ttFromTtIso('start', startIso);
  const times = Array.from({ length: days + 1 }, (_, k) => t0 + k);
  const tr = propagateEnsemble([stateOf(HelioState(body, T(t0)), t0)], times, { omitBodies: [body] });
  return Math.max(
    ...times.map((t, k) => {
      const e = HelioVector(Body.Earth, T(t));
      const p = HelioVector(body, T(t));
      return angleArcsec([tr.positionsAu[3 * k]! - e.x, tr.positionsAu[3 * k + 1]! - e.y, tr.positionsAu[3 * k + 2]! - e.z], [p.x - e.x, p.y - e.y, p.z - e.z]);
    }),
  );
}

describe('perturbed propagation against the library', () => {
  it("agrees with astronomy-engine's GravitySimulator (0.02-day steps) within 0.01 arcsec from Earth over 30 days", () => {
    const t0 = ttFromTtIso('t0', '2026-09-01T00:00:00');
    const s = stateFromPerihelionElements({ qAu: 0.7, e: 0.3, iDeg: 5, nodeDeg: 40, periDeg: 100, tpTt: t0 + 10 }, t0);
    const sim = new GravitySimulator(Body.Sun, T(t0), [new StateVector(s.x, s.y, s.z, s.vx, s.vy, s.vz, T(t0))]);
    let end: StateVector[] = [];
    for (let k = 1; k <= 1500; k++) end = sim.Update(T(t0 + k * 0.02));
    const ours = propagateEnsemble([s], [t0 + 30]);
    const e = HelioVector(Body.Earth, T(t0 + 30));
    const sep = angleArcsec(
      [ours.positionsAu[0]! - e.x, ours.positionsAu[1]! - e.y, ours.positionsAu[2]! - e.z],
      [end[0]!.x - e.x, end[0]!.y - e.y, end[0]!.z - e.z],
    );
    expect(sep).toBeLessThan(0.01);
  });

  // docs/accuracy.md: the bar of 1 arcsec holds on 7 of these 9 dates; the library's truncated VSOP87 Mars is
  // not an exact solution of the force model, so the two others reach 1.14 and 1.53 arcsec (measured).
  it.each(['2024-01-01', '2024-09-01', '2025-01-01', '2025-05-01', '2026-01-01', '2026-09-01', '2027-01-01', '2027-05-01', '2028-05-01'])(
    "tracks the library's Mars within 1.6 arcsec from Earth over 30 days from %s",
    (date) => {
      expect(planetTrackingErrorArcsec(Body.Mars, `${date}T00:00:00`, 30)).toBeLessThan(1.6);
    },
  );

  it("tracks the library's Jupiter within 0.1 arcsec from Earth over 30 days", () => {
    expect(planetTrackingErrorArcsec(Body.Jupiter, '2026-05-01T00:00:00', 30)).toBeLessThan(0.1);
  });
});

/** An invented object that passes `missAu` from Earth's centre at `closestIso` with 9 km/s relative speed. */
function closeApproacher(missAu: number, closestIso: string): HeliocentricState {
  const tt = ttFromTtIso('closest', closestIso);
  const earth = HelioState(Body.Earth, T(tt));
  const kmPerSToAuPerDay = 86_400 / 149_597_870.7;
  // Offset perpendicular to a relative velocity tilted 30 deg out of the ecliptic-ish plane.
  const rel: V3 = [0.6, -0.5, 0.62];
  const reln = Math.hypot(...rel);
  const u: V3 = [rel[0] / reln, rel[1] / reln, rel[2] / reln];
  const off: V3 = [u[1], -u[0], 0];
  const offn = Math.hypot(...off);
  return {
    tt,
    x: earth.x + (missAu * off[0]) / offn, y: earth.y + (missAu * off[1]) / offn, z: earth.z + (missAu * off[2]) / offn,
    vx: earth.vx + 9 * kmPerSToAuPerDay * u[0], vy: earth.vy + 9 * kmPerSToAuPerDay * u[1], vz: earth.vz + 9 * kmPerSToAuPerDay * u[2],
  };
}

describe('a close approacher against a tight-step independent RK4', () => {
  // docs/accuracy.md: measured 0.00001, 0.00001 and 0.00005 arcsec (worst of 5 times).
  for (const missAu of [0.002, 0.01, 0.05]) {
    it(`keeps topocentric RA/Dec within 0.0001 arcsec over 3 days for a pass at ${missAu} au`, () => {
      const start = closeApproacher(missAu, '2027-03-05T12:00:00');
      const timesTt = [-1.5, -0.75, 0, 0.75, 1.5].map((d) => start.tt + d);
      const places = ensemblePlaces([start], site, timesTt.map(utcFromTt));
      let worst = 0;
      timesTt.forEach((tt, k) => {
        const ref = referenceRk4([start.x, start.y, start.z], [start.vx, start.vy, start.vz], start.tt, tt);
        const dir = referenceDirection(ref.r, ref.v, utcFromTt(tt), site);
        const ra = (places.raDeg[k]! * Math.PI) / 180, dec = (places.decDeg[k]! * Math.PI) / 180;
        worst = Math.max(worst, angleArcsec([Math.cos(dec) * Math.cos(ra), Math.cos(dec) * Math.sin(ra), Math.sin(dec)], dir));
      });
      expect(worst).toBeLessThan(1e-4);
    });
  }
});

describe('step halving', () => {
  // docs/accuracy.md: measured 0.0000009 and 0.0000033 arcsec at the two ends.
  it('changes the topocentric place of a 0.002 au pass by less than 0.00001 arcsec when the step fraction is halved', () => {
    const start = closeApproacher(0.002, '2027-03-05T12:00:00');
    const times = [-1.5, 1.5].map((d) => utcFromTt(start.tt + d));
    const coarse = ensemblePlaces([start], site, times);
    const fine = ensemblePlaces([start], site, times, { stepFraction: 0.01 });
    for (let k = 0; k < times.length; k++) {
      const dRa = (coarse.raDeg[k]! - fine.raDeg[k]!) * Math.cos((fine.decDeg[k]! * Math.PI) / 180) * 3600;
      const dDec = (coarse.decDeg[k]! - fine.decDeg[k]!) * 3600;
      expect(Math.hypot(dRa, dDec)).toBeLessThan(1e-5);
    }
  });
});

describe('ensemble propagation', () => {
  const t0 = ttFromUtc(new Date('2027-03-04T00:00:00Z'));
  const members = [0.8, 1.0, 1.3].map((q, i) => stateFromPerihelionElements({ qAu: q, e: 0.4, iDeg: 3 + i, nodeDeg: 100, periDeg: 50, tpTt: t0 - 20 }, t0));
  const times = [t0 - 2, t0, t0 + 1, t0 + 3];

  it('gives each member the same trajectory as propagating it alone, to 1e-10 au', () => {
    const together = propagateEnsemble(members, times);
    members.forEach((m, i) => {
      const alone = propagateEnsemble([m], times);
      times.forEach((_, k) => {
        for (let axis = 0; axis < 3; axis++) {
          // The shared step is the smallest any member needs, so results differ only by integration error.
          expect(Math.abs(together.positionsAu[(k * members.length + i) * 3 + axis]! - alone.positionsAu[k * 3 + axis]!)).toBeLessThan(1e-10);
        }
      });
    });
  });

  it('interpolates inside a 1-day step to within 2e-9 au (0.3 km) of a step that ends at that time', () => {
    // With 1-day steps the output at +0.5 day falls inside a step and comes from the Hermite interpolant.
    const inside = propagateEnsemble([members[0]!], [t0 + 0.5, t0 + 1], { stepFraction: 0.05 });
    const landed = propagateEnsemble([members[0]!], [t0 + 0.5], { stepFraction: 0.05 });
    expect(inside.stepCount).toBe(1);
    for (let axis = 0; axis < 3; axis++) expect(Math.abs(inside.positionsAu[axis]! - landed.positionsAu[axis]!)).toBeLessThan(2e-9);
    for (let axis = 0; axis < 3; axis++) expect(Math.abs(inside.velocitiesAuPerDay[axis]! - landed.velocitiesAuPerDay[axis]!)).toBeLessThan(1e-8);
  });

  it('gives each site from one propagation the same places as a run for that site alone', () => {
    const other = { latDeg: -30.2, lonDeg: 70.8, heightM: 2400 }; // an invented southern site
    const timesUtc = times.map(utcFromTt);
    const seen: number[][] = [[], []];
    streamEnsemblePlacesForSites(members, [site, other], timesUtc, (k, v, p) => {
      if (k === 3) seen[v]!.push(p.raDeg[1]!, p.decDeg[1]!);
    });
    for (const [v, where] of [site, other].entries()) {
      const alone = ensemblePlaces(members, where, timesUtc);
      expect(seen[v]).toEqual([alone.raDeg[3 * members.length + 1], alone.decDeg[3 * members.length + 1]]);
    }
  });

  it('returns the starting state at the epoch and keeps the requested order of times', () => {
    const tr = propagateEnsemble(members, [t0 + 1, t0]);
    expect(tr.positionsAu[3 * members.length]).toBe(members[0]!.x);
    expect(Array.from(tr.timesTt)).toEqual([t0 + 1, t0]);
  });

  it('comes back to the start after running 3 days forward and then back, within 1e-10 au', () => {
    const there = propagateEnsemble([members[1]!], [t0 + 3]);
    const p = there.positionsAu, v = there.velocitiesAuPerDay;
    const back = propagateEnsemble([{ tt: t0 + 3, x: p[0]!, y: p[1]!, z: p[2]!, vx: v[0]!, vy: v[1]!, vz: v[2]! }], [t0]);
    expect(Math.hypot(back.positionsAu[0]! - members[1]!.x, back.positionsAu[1]! - members[1]!.y, back.positionsAu[2]! - members[1]!.z)).toBeLessThan(1e-10);
  });

  it('rejects states at different epochs by naming the member', () => {
    expect(() => propagateEnsemble([members[0]!, { ...members[1]!, tt: t0 + 1 }], times)).toThrow(OrbitInputError);
    expect(() => propagateEnsemble([members[0]!, { ...members[1]!, tt: t0 + 1 }], times)).toThrow(/states\[1\]\.tt/);
  });

  it('rejects a non-finite time by naming its index', () => {
    expect(() => propagateEnsemble(members, [t0, Number.NaN])).toThrow(/timesTt\[1\] = NaN/);
  });
});

describe('perturber positions', () => {
  // docs/accuracy.md: Hermite between 0.125-day nodes keeps the Moon within 1e-11 au (measured 7.5e-12 au over 37 days).
  it("interpolate the library's Moon to within 1e-11 au between nodes", () => {
    const table = new PerturberTable();
    let worst = 0;
    for (let k = 0; k < 400; k++) {
      const tt = 9900 + k * 0.0917;
      const a = table.bodyStateAt(MOON_INDEX, tt);
      const b = HelioState(Body.Moon, T(tt));
      worst = Math.max(worst, Math.hypot(a.x - b.x, a.y - b.y, a.z - b.z));
    }
    expect(worst).toBeLessThan(1e-11);
  });
});

describe('a trajectory through a body', () => {
  it("stops with an error naming the member instead of returning NaN when an orbit starts at the Earth's centre", () => {
    const tt = 9862; // a perturber-table node, where the table returns the library's Earth exactly
    const earth = HelioState(Body.Earth, T(tt));
    const start: HeliocentricState = { tt, x: earth.x, y: earth.y, z: earth.z, vx: earth.vx + 0.01, vy: earth.vy, vz: earth.vz };
    expect(() => propagateEnsemble([start], [tt + 1])).toThrow(/member 0: the state became non-finite near TT/);
  });
});
