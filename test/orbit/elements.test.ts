import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import {
  classicalFromState,
  perihelionElementsFromState,
  stateFromClassical,
  stateFromPerihelionElements,
  type PerihelionElements,
} from '../../src/orbit/elements.js';
import { eccentricAnomalyFromMean, hyperbolicAnomalyFromMean, trueFromEccentricAnomaly, trueFromHyperbolicAnomaly } from '../../src/orbit/kepler.js';
import { GM_SUN_AU3_PER_DAY2 } from '../../src/orbit/constants.js';
import { OrbitInputError } from '../../src/orbit/errors.js';

const DEG = Math.PI / 180;
const MU_EARTH_KM3_S2 = 398_600.4418; // Vallado's value for the example

// Vallado, Fundamentals of Astrodynamics and Applications, Example 2-5 (RV2COE).
const valladoR = { x: 6524.834, y: 6862.875, z: 6448.296 };
const valladoV = { x: 4.901327, y: 5.533756, z: -1.976341 };

const angleDiffDeg = (a: number, b: number) => Math.abs(((a - b + 540) % 360) - 180);

describe('classical elements from a state (Vallado Example 2-5)', () => {
  const el = classicalFromState({ r: valladoR, v: valladoV }, MU_EARTH_KM3_S2);

  it('gives a = 36127.343 km and p = 11067.790 km', () => {
    expect(Math.abs(el.semiMajorAxis - 36127.343)).toBeLessThan(0.01);
    expect(Math.abs(el.semiLatusRectum - 11067.79)).toBeLessThan(0.01);
  });
  it('gives e = 0.832853', () => expect(Math.abs(el.e - 0.832853)).toBeLessThan(1e-6));
  it('gives i = 87.870 deg', () => expect(Math.abs(el.iRad / DEG - 87.87)).toBeLessThan(0.001));
  it('gives node = 227.89 deg and argument of perigee = 53.38 deg', () => {
    expect(angleDiffDeg(el.nodeRad / DEG, 227.89)).toBeLessThan(0.01);
    expect(angleDiffDeg(el.argPeriRad / DEG, 53.38)).toBeLessThan(0.01);
  });
  it('gives true anomaly = 92.335 deg', () => expect(angleDiffDeg(el.trueAnomalyRad / DEG, 92.335)).toBeLessThan(0.001));
});

describe('state from classical elements (the inverse of Vallado Example 2-5; Example 2-6 by memory)', () => {
  it('recovers the Example 2-5 position to 1 m and velocity to 1 mm/s', () => {
    const el = classicalFromState({ r: valladoR, v: valladoV }, MU_EARTH_KM3_S2);
    const { r, v } = stateFromClassical(el, MU_EARTH_KM3_S2);
    expect(Math.hypot(r.x - valladoR.x, r.y - valladoR.y, r.z - valladoR.z)).toBeLessThan(1e-3);
    expect(Math.hypot(v.x - valladoV.x, v.y - valladoV.y, v.z - valladoV.z)).toBeLessThan(1e-6);
  });

  it("from the book's rounded elements lands within 2 km of the book's position (elements given to 0.01 deg)", () => {
    const { r } = stateFromClassical(
      { semiMajorAxis: 36127.343, semiLatusRectum: 11067.79, e: 0.83285, iRad: 87.87 * DEG, nodeRad: 227.89 * DEG, argPeriRad: 53.38 * DEG, trueAnomalyRad: 92.335 * DEG },
      MU_EARTH_KM3_S2,
    );
    expect(Math.hypot(r.x - valladoR.x, r.y - valladoR.y, r.z - valladoR.z)).toBeLessThan(2);
  });
});

describe('perihelion elements <-> heliocentric state', () => {
  const gm = GM_SUN_AU3_PER_DAY2;

  it('agrees with the Kepler-equation route for an ellipse (Meeus ch. 30 and 33 method)', () => {
    const el: PerihelionElements = { qAu: 0.33, e: 0.85, iDeg: 12, nodeDeg: 335, periDeg: 186, tpTt: 0 };
    const tt = -22.5;
    const a = el.qAu / (1 - el.e);
    const ecc = eccentricAnomalyFromMean(Math.sqrt(gm / a ** 3) * (tt - el.tpTt), el.e);
    const nu = trueFromEccentricAnomaly(ecc, el.e);
    const rKepler = a * (1 - el.e * Math.cos(ecc));
    const s = stateFromPerihelionElements(el, tt);
    expect(Math.abs(Math.hypot(s.x, s.y, s.z) - rKepler)).toBeLessThan(1e-12);
    const back = perihelionElementsFromState(s);
    expect(Math.abs(back.tpTt - el.tpTt)).toBeLessThan(1e-9);
    expect(nu).toBeLessThan(0);
  });

  it('agrees with the hyperbolic Kepler equation for e = 3 (Vallado 2-38)', () => {
    const el: PerihelionElements = { qAu: 1.1, e: 3, iDeg: 40, nodeDeg: 10, periDeg: 20, tpTt: 100 };
    const tt = 400;
    const a = el.qAu / (el.e - 1);
    const h = hyperbolicAnomalyFromMean(Math.sqrt(gm / a ** 3) * (tt - el.tpTt), el.e);
    const rKepler = a * (el.e * Math.cosh(h) - 1);
    const s = stateFromPerihelionElements(el, tt);
    expect(Math.abs(Math.hypot(s.x, s.y, s.z) - rKepler)).toBeLessThan(1e-10 * rKepler);
    expect(trueFromHyperbolicAnomaly(h, el.e)).toBeGreaterThan(0);
  });

  it('puts a parabola at r = q / cos^2(nu/2) with Barker\'s anomaly (Meeus ch. 34)', () => {
    const el: PerihelionElements = { qAu: 0.8, e: 1, iDeg: 100, nodeDeg: 50, periDeg: 300, tpTt: 0 };
    const s = stateFromPerihelionElements(el, 30);
    const back = perihelionElementsFromState(s);
    expect(Math.abs(back.e - 1)).toBeLessThan(1e-12);
    expect(Math.abs(back.qAu - 0.8)).toBeLessThan(1e-12);
    expect(Math.abs(back.tpTt)).toBeLessThan(1e-8);
  });

  it('round-trips elements -> state -> elements for ellipses and hyperbolas (property)', () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0.05, max: 6, noNaN: true }),
        fc.oneof(fc.double({ min: 0.01, max: 0.995, noNaN: true }), fc.double({ min: 1.005, max: 8, noNaN: true })),
        fc.double({ min: 1, max: 179, noNaN: true }),
        fc.double({ min: 0, max: 359.9, noNaN: true }),
        fc.double({ min: 0, max: 359.9, noNaN: true }),
        fc.double({ min: -200, max: 200, noNaN: true }),
        (qAu, e, iDeg, nodeDeg, periDeg, sinceTp) => {
          const el: PerihelionElements = { qAu, e, iDeg, nodeDeg, periDeg, tpTt: 9000 };
          const back = perihelionElementsFromState(stateFromPerihelionElements(el, 9000 + sinceTp));
          const period = e < 1 ? 2 * Math.PI * Math.sqrt((qAu / (1 - e)) ** 3 / gm) : Infinity;
          let dtp = Math.abs(back.tpTt - el.tpTt);
          if (Number.isFinite(period)) dtp = Math.abs((((back.tpTt - el.tpTt) % period) + 1.5 * period) % period - period / 2);
          const e0 = e; // the argument of perihelion is ill-defined as e -> 0 (circular orbits are excluded above)
          return (
            Math.abs(back.qAu - qAu) < 1e-10 * qAu &&
            Math.abs(back.e - e) < 1e-10 &&
            angleDiffDeg(back.iDeg, iDeg) < 1e-8 &&
            angleDiffDeg(back.nodeDeg, nodeDeg) < 1e-8 &&
            angleDiffDeg(back.periDeg, periDeg) < 1e-8 / e0 &&
            dtp < 1e-6 / e0
          );
        },
      ),
    );
  });

  it('rejects a negative perihelion distance by naming the notice field', () => {
    expect(() => stateFromPerihelionElements({ qAu: -1, e: 0.5, iDeg: 1, nodeDeg: 1, periDeg: 1, tpTt: 0 }, 0)).toThrow(OrbitInputError);
    expect(() => stateFromPerihelionElements({ qAu: -1, e: 0.5, iDeg: 1, nodeDeg: 1, periDeg: 1, tpTt: 0 }, 0)).toThrow(/orbit\.q = -1/);
  });
});
