import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import {
  eccentricAnomalyFromMean,
  hyperbolicAnomalyFromMean,
  meanFromEccentricAnomaly,
  meanFromHyperbolicAnomaly,
  parabolicTanHalfAnomaly,
  propagateTwoBody,
  stumpff,
} from '../../src/orbit/kepler.js';
import { OrbitInputError } from '../../src/orbit/errors.js';
import { cross, dot, norm } from '../../src/orbit/vector.js';

const DEG = Math.PI / 180;

describe("Kepler's equation", () => {
  it('gives E = 5.554589 deg for e = 0.1, M = 5 deg (Meeus, Astronomical Algorithms 2nd ed., Example 30.a)', () => {
    const eDeg = eccentricAnomalyFromMean(5 * DEG, 0.1) / DEG;
    expect(Math.abs(eDeg - 5.554589)).toBeLessThan(1e-6);
  });

  it('solves e = 0.99 near perihelion, where simple iteration fails (Meeus ch. 30 discusses e close to 1)', () => {
    for (const mDeg of [0.01, 0.5, 2, 30, 179.9]) {
      const m = mDeg * DEG;
      const ecc = eccentricAnomalyFromMean(m, 0.99);
      expect(Math.abs(meanFromEccentricAnomaly(ecc, 0.99) - m)).toBeLessThan(1e-14);
    }
  });

  it('keeps the revolution count of M in E', () => {
    const m = 7 * Math.PI + 0.3;
    const ecc = eccentricAnomalyFromMean(m, 0.5);
    expect(Math.abs(meanFromEccentricAnomaly(ecc, 0.5) - m)).toBeLessThan(1e-13);
  });

  it('solves a near-parabolic ellipse at a tiny mean anomaly, where Newton steps stall on rounding (e = 0.99887, M = 4.9e-5 rad; a case the property below once found)', () => {
    const m = 0.00004882368377305037, e = 0.9988680910646884;
    const ecc = eccentricAnomalyFromMean(m, e);
    // E is about 0.036 rad here, so E - e sin E carries rounding of about 1e-17 rad.
    expect(Math.abs(meanFromEccentricAnomaly(ecc, e) - m)).toBeLessThan(1e-16);
  });

  it('round-trips the elliptic equation for any M and e < 0.999 (property)', () => {
    fc.assert(
      fc.property(fc.double({ min: -20, max: 20, noNaN: true }), fc.double({ min: 0, max: 0.999, noNaN: true }), (m, e) => {
        const ecc = eccentricAnomalyFromMean(m, e);
        return Math.abs(meanFromEccentricAnomaly(ecc, e) - m) < 1e-12;
      }),
    );
  });

  it('round-trips the hyperbolic equation M = e sinh H - H for e from 1.0001 to 20 and |M| up to 1000 (property)', () => {
    fc.assert(
      fc.property(fc.double({ min: -1000, max: 1000, noNaN: true }), fc.double({ min: 1.0001, max: 20, noNaN: true }), (m, e) => {
        const h = hyperbolicAnomalyFromMean(m, e);
        return Math.abs(meanFromHyperbolicAnomaly(h, e) - m) < 1e-11 * (1 + Math.abs(m));
      }),
    );
  });

  it("solves Barker's equation D + D^3/3 = W exactly (Meeus ch. 34)", () => {
    for (const w of [-50, -1, 0, 0.3, 1, 1e4]) {
      const d = parabolicTanHalfAnomaly(w);
      expect(Math.abs(d + d ** 3 / 3 - w)).toBeLessThan(1e-12 * (1 + Math.abs(w)));
    }
  });

  it('rejects an eccentricity outside the elliptic range with a named error', () => {
    expect(() => eccentricAnomalyFromMean(1, 1.2)).toThrow(OrbitInputError);
    expect(() => eccentricAnomalyFromMean(1, 1.2)).toThrow(/^e = 1.2: /);
    expect(() => hyperbolicAnomalyFromMean(Number.NaN, 1.5)).toThrow(/meanAnomalyRad = NaN: expected a finite number/);
  });
});

describe('Stumpff functions', () => {
  it('match their series at the switch-over between closed form and series (Vallado Algorithm 1)', () => {
    for (const psi of [1.0001e-6, -1.0001e-6]) {
      const [c2, c3] = stumpff(psi);
      expect(Math.abs(c2 - (0.5 - psi / 24))).toBeLessThan(1e-10);
      expect(Math.abs(c3 - (1 / 6 - psi / 120))).toBeLessThan(1e-10);
    }
  });
});

describe('two-body propagation by universal variables', () => {
  const gm = 2.959122082855911e-4; // Sun, au^3/day^2 (DE405)

  it('returns to the start after one period of an ellipse (Kepler third law)', () => {
    const r = { x: 1.2, y: 0, z: 0 };
    const v = { x: 0, y: 0.9 * Math.sqrt(gm / 1.2), z: 0.002 };
    const a = 1 / (2 / 1.2 - dot(v, v) / gm);
    const period = 2 * Math.PI * Math.sqrt(a ** 3 / gm);
    const back = propagateTwoBody({ r, v }, period, gm);
    expect(norm({ x: back.r.x - r.x, y: back.r.y - r.y, z: back.r.z - r.z })).toBeLessThan(1e-11);
  });

  it('conserves energy and angular momentum for elliptic, parabolic and hyperbolic orbits over +-3000 days (property)', () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0.05, max: 5, noNaN: true }),
        fc.double({ min: 0.3, max: 2, noNaN: true }),
        fc.double({ min: -1, max: 1, noNaN: true }),
        fc.double({ min: -3000, max: 3000, noNaN: true }),
        (r0, speedFactor, tilt, dt) => {
          const escape = Math.sqrt((2 * gm) / r0);
          const speed = speedFactor * escape * 0.7;
          const r = { x: r0, y: 0, z: 0 };
          const v = { x: 0.3 * tilt * speed, y: speed * Math.cos(tilt), z: speed * Math.sin(tilt) };
          const end = propagateTwoBody({ r, v }, dt, gm);
          const energy = (s: { r: typeof r; v: typeof v }) => dot(s.v, s.v) / 2 - gm / norm(s.r);
          const h0 = cross(r, v);
          const h1 = cross(end.r, end.v);
          const e0 = energy({ r, v });
          const dh = norm({ x: h1.x - h0.x, y: h1.y - h0.y, z: h1.z - h0.z }) / norm(h0);
          const de = Math.abs(energy(end) - e0) / (Math.abs(e0) + gm / r0);
          return dh < 1e-10 && de < 1e-10;
        },
      ),
    );
  });

  it('runs forward then backward to the starting state (property)', () => {
    fc.assert(
      fc.property(fc.double({ min: 0.2, max: 3, noNaN: true }), fc.double({ min: 0.5, max: 1.6, noNaN: true }), fc.double({ min: -500, max: 500, noNaN: true }), (r0, k, dt) => {
        const r = { x: r0, y: 0.1, z: -0.05 };
        const v = { x: 0.001, y: k * Math.sqrt(gm / r0), z: 0.001 };
        const there = propagateTwoBody({ r, v }, dt, gm);
        const back = propagateTwoBody(there, -dt, gm);
        return norm({ x: back.r.x - r.x, y: back.r.y - r.y, z: back.r.z - r.z }) < 1e-9 * (1 + norm(there.r));
      }),
    );
  });
});
