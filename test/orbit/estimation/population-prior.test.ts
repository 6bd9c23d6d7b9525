import { Body, HelioState, MakeTime } from 'astronomy-engine';
import { describe, expect, it } from 'vitest';
import {
  delaunayJacobian,
  DEFAULT_TRACKLET_V,
  EstimationInputError,
  estimateObject,
  inclinationDensity,
  meanTrackletV,
  POPULATION_WEIGHTS,
  phaseSpaceDensity,
  populationDensity,
  populationLogPrior,
  priorElementsFromState,
  semiMajorAxisEccentricityDensity,
  type PopulationComponentName,
  type PriorElements,
} from '../../../src/orbit/estimation/index.js';
import { createRandom } from '../../../src/orbit/estimation/random.js';
import { referenceCase } from '../../reference/cases.js';
import { trackletOf } from './reference-scorer.js';
import { GM_SUN_AU3_PER_DAY2 } from '../../../src/orbit/constants.js';
import { stateFromClassical } from '../../../src/orbit/elements.js';
import { eccentricAnomalyFromMean, trueFromEccentricAnomaly } from '../../../src/orbit/kepler.js';

const MU = GM_SUN_AU3_PER_DAY2;
const DEG = Math.PI / 180;
const COMPONENTS: PopulationComponentName[] = ['mainBelt', 'nearEarth', 'floor'];

/** (r, v) as a 6-vector from (a, e, i, M, argPeri, node), through the project's elements -> state conversion (Vallado COE2RV). */
function stateOfElements(a: number, e: number, i: number, meanAnomaly: number, argPeri: number, node: number): number[] {
  const nu = trueFromEccentricAnomaly(eccentricAnomalyFromMean(meanAnomaly, e), e);
  const { r, v } = stateFromClassical({ semiMajorAxis: a, semiLatusRectum: a * (1 - e * e), e, iRad: i, nodeRad: node, argPeriRad: argPeri, trueAnomalyRad: nu }, MU);
  return [r.x, r.y, r.z, v.x, v.y, v.z];
}

/** Determinant by Gaussian elimination with partial pivoting. */
function determinant(m: number[][]): number {
  const a = m.map((row) => [...row]);
  const n = a.length;
  let det = 1;
  for (let c = 0; c < n; c++) {
    let p = c;
    for (let r = c + 1; r < n; r++) if (Math.abs(a[r]![c]!) > Math.abs(a[p]![c]!)) p = r;
    if (p !== c) {
      [a[p], a[c]] = [a[c]!, a[p]!];
      det = -det;
    }
    det *= a[c]![c]!;
    for (let r = c + 1; r < n; r++) {
      const f = a[r]![c]! / a[c]![c]!;
      for (let k = c; k < n; k++) a[r]![k]! -= f * a[c]![k]!;
    }
  }
  return det;
}

/** Central-difference Jacobian of f at x, relative steps h * max(|x|, 1e-2). */
function jacobian(f: (x: number[]) => number[], x: number[], h = 1e-6): number[][] {
  const columns = x.map((xj, j) => {
    const step = h * Math.max(Math.abs(xj), 1e-2);
    const up = [...x], down = [...x];
    up[j] = xj + step;
    down[j] = xj - step;
    const fu = f(up), fd = f(down);
    return fu.map((v, k) => (v - fd[k]!) / (2 * step));
  });
  return columns[0]!.map((_, row) => columns.map((col) => col[row]!));
}

const ORBITS: [number, number, number][] = [
  [1.9, 0.5, 10 * DEG],
  [2.7, 0.12, 8 * DEG],
  [0.8, 0.3, 33 * DEG],
];

describe('population prior: phase-space volume', () => {
  it.each(ORBITS)('has unit Jacobian from the Delaunay variables to position and velocity (a %f au, e %f; canonical, Murray & Dermott 1999 sect. 2.10; finite differences to 1e-5)', (a, e, i) => {
    // x = (L, G, H, l, g, h) with L = sqrt(mu a), G = L sqrt(1 - e^2), H = G cos i.
    const fromDelaunay = (x: number[]): number[] => {
      const [L, G, H, l, g, h] = x as [number, number, number, number, number, number];
      return stateOfElements((L * L) / MU, Math.sqrt(1 - (G / L) ** 2), Math.acos(H / G), l, g, h);
    };
    const L = Math.sqrt(MU * a), G = L * Math.sqrt(1 - e * e);
    const det = determinant(jacobian(fromDelaunay, [L, G, G * Math.cos(i), 1.1, 0.7, 2.3]));
    expect(Math.abs(Math.abs(det) - 1)).toBeLessThan(1e-5);
  });

  it.each(ORBITS)('gives d^3r d^3v = (mu^3/2 / 2) sqrt(a) e sin i da de di dM dg dh (a %f au, e %f; finite differences of elements -> state to 1e-5)', (a, e, i) => {
    const det = determinant(jacobian((x) => stateOfElements(x[0]!, x[1]!, x[2]!, x[3]!, x[4]!, x[5]!), [a, e, i, 1.1, 0.7, 2.3]));
    expect(Math.abs(Math.abs(det) / delaunayJacobian(a, e, i) - 1)).toBeLessThan(1e-5);
  });

  it('is the elements density over (2 pi)^3 times that Jacobian (n = f / ((2 pi)^3 J), 1e-12)', () => {
    const el: PriorElements = { aAu: 1.9, e: 0.5, iRad: 10 * DEG };
    for (const name of COMPONENTS) {
      const f = semiMajorAxisEccentricityDensity(name, el.aAu, el.e) * inclinationDensity(name, el.iRad);
      expect(phaseSpaceDensity(name, el) / (f / ((2 * Math.PI) ** 3 * delaunayJacobian(el.aAu, el.e, el.iRad))) - 1).toBeCloseTo(0, 12);
    }
  });

  it('stays finite on circular and ecliptic orbits (the e sin i of the Jacobian cancels)', () => {
    for (const name of COMPONENTS) {
      const n = phaseSpaceDensity(name, { aAu: 2.5, e: 0, iRad: 0 });
      expect(Number.isFinite(n)).toBe(true);
      expect(n).toBeGreaterThanOrEqual(0);
    }
  });
});

describe('population prior: element densities', () => {
  it.each(COMPONENTS)('normalises the %s density in (a, e) to 1 (independent midpoint grid, linear in a to 40 au plus the floor tail, 2e-3)', (name) => {
    let sum = 0;
    const cellsA = 8000, cellsE = 300;
    for (let j = 0; j < cellsA; j++) {
      const a = 0.05 + ((j + 0.5) * (40 - 0.05)) / cellsA;
      for (let k = 0; k < cellsE; k++) sum += semiMajorAxisEccentricityDensity(name, a, (k + 0.5) / cellsE) * ((40 - 0.05) / cellsA) * (1 / cellsE);
    }
    // Beyond 40 au only the floor has weight: its density 1/(a (1 + a/30)) integrates to ln(1 + 30/40) there.
    const tail = name === 'floor' ? Math.log(1 + 30 / 40) / Math.log(1 + 30 / 0.25) : 0;
    expect(Math.abs(sum + tail - 1)).toBeLessThan(2e-3);
  });

  it.each(COMPONENTS)('normalises the %s inclination density to 1 over 0-180 deg (midpoint, 1e-6)', (name) => {
    const cells = 20000;
    let sum = 0;
    for (let k = 0; k < cells; k++) sum += inclinationDensity(name, ((k + 0.5) * Math.PI) / cells) * (Math.PI / cells);
    expect(Math.abs(sum - 1)).toBeLessThan(1e-6);
  });

  it('puts the main belt between 2.1 and 3.3 au (published shape: the belt between the 4:1 and 2:1 resonances)', () => {
    expect(semiMajorAxisEccentricityDensity('mainBelt', 2.7, 0.1)).toBeGreaterThan(1000 * semiMajorAxisEccentricityDensity('mainBelt', 1.8, 0.1));
    expect(semiMajorAxisEccentricityDensity('mainBelt', 2.7, 0.1)).toBeGreaterThan(1000 * semiMajorAxisEccentricityDensity('mainBelt', 3.6, 0.1));
  });

  it('keeps near-Earth objects inside perihelion 1.3 au (the usual NEO definition; soft edge of 0.03 au)', () => {
    // a = 2 au: q = 1.1 au at e = 0.45, q = 1.5 au at e = 0.25.
    expect(semiMajorAxisEccentricityDensity('nearEarth', 2, 0.45)).toBeGreaterThan(100 * semiMajorAxisEccentricityDensity('nearEarth', 2, 0.25));
  });
});

describe('population prior: weight to every bound orbit', () => {
  const typicalNeo = populationDensity({ aAu: 1.9, e: 0.5, iRad: 10 * DEG }, 22);
  const random = createRandom(11);
  /** Random bound heliocentric states at 0.7-6 au (isotropic positions and velocities below escape speed). */
  const bound = Array.from({ length: 20000 }, () => {
    const r = 0.7 + 5.3 * random.uniform();
    const v = Math.sqrt((2 * MU) / r) * Math.cbrt(random.uniform());
    const unit = (): [number, number, number] => {
      const z = 2 * random.uniform() - 1, phi = 2 * Math.PI * random.uniform(), s = Math.sqrt(1 - z * z);
      return [s * Math.cos(phi), s * Math.sin(phi), z];
    };
    const [px, py, pz] = unit(), [wx, wy, wz] = unit();
    return priorElementsFromState({ tt: 0, x: r * px, y: r * py, z: r * pz, vx: v * wx, vy: v * wy, vz: v * wz });
  }).filter((el): el is PriorElements => el !== null);

  it('gives every bound Earth-approaching orbit (q < 1.3 au, a < 6 au), prograde or retrograde, at least 1e-5 of a typical near-Earth orbit\'s density (the floor; 20 000 random states)', () => {
    const near = bound.filter((el) => el.aAu < 6 && el.aAu * (1 - el.e) < 1.3);
    expect(near.length).toBeGreaterThan(1000);
    for (const el of near) expect(populationDensity(el, 22) / typicalNeo).toBeGreaterThan(1e-5);
  });

  it('gives every bound orbit up to a = 30 au at least 1e-6 of it, and the floor never less than its weight times its density', () => {
    const upTo30 = bound.filter((el) => el.aAu < 30);
    for (const el of upTo30) {
      const density = populationDensity(el, 22);
      expect(density / typicalNeo).toBeGreaterThan(1e-6);
      expect(density).toBeGreaterThanOrEqual(POPULATION_WEIGHTS.floor * Math.exp(Math.LN10 * 0.35 * (22 - 18)) * phaseSpaceDensity('floor', el) * (1 - 1e-12));
    }
  });
});

describe('population prior along a line of sight', () => {
  it('prefers main-belt distances for a slow mover at opposition (0.23 deg/day retrograde, the rate of a circular orbit at 2.7 au; peak of the range-rate marginal at 1.2-2.4 au)', () => {
    const date = new Date('2027-03-20T00:00:00Z');
    const earth = HelioState(Body.Earth, MakeTime(date));
    const o = [earth.x, earth.y, earth.z];
    const ov = [earth.vx, earth.vy, earth.vz];
    const r = Math.hypot(...o);
    const u = o.map((x) => x / r);
    const speed = Math.hypot(...ov);
    const t = ov.map((x) => x / speed);
    // Circular orbit at 2.7 au seen at opposition: (v_obj - v_earth) / (2.7 - 1) au, retrograde.
    const rate = (Math.sqrt(MU / 2.7) - speed) / 1.7;
    const marginal = (rho: number): number => {
      let sum = 0;
      for (let k = -200; k <= 200; k++) {
        const rhoDot = k * 1e-4;
        const state = { tt: 0, x: o[0]! + rho * u[0]!, y: o[1]! + rho * u[1]!, z: o[2]! + rho * u[2]!, vx: ov[0]! + rhoDot * u[0]! + rho * rate * t[0]!, vy: ov[1]! + rhoDot * u[1]! + rho * rate * t[1]!, vz: ov[2]! + rhoDot * u[2]! + rho * rate * t[2]! };
        const lp = populationLogPrior(state, { x: o[0]!, y: o[1]!, z: o[2]! }, rho, 21);
        if (Number.isFinite(lp)) sum += Math.exp(lp);
      }
      return sum * rho; // per d(ln rho)
    };
    const ranges = Array.from({ length: 60 }, (_, k) => 0.01 * Math.pow(500, k / 59));
    const values = ranges.map(marginal);
    const peak = ranges[values.indexOf(Math.max(...values))]!;
    expect(peak).toBeGreaterThan(1.2);
    expect(peak).toBeLessThan(2.4);
    // The near-Earth solutions (< 0.1 au) weigh less than a thousandth of the peak.
    for (const [k, rho] of ranges.entries()) if (rho < 0.1) expect(values[k]! / Math.max(...values)).toBeLessThan(1e-3);
  });

  it('takes V = 21 when the tracklet has no usable magnitude', () => {
    const state = { tt: 0, x: 1.5, y: 0.3, z: 0.1, vx: 0.001, vy: 0.012, vz: 0.001 };
    const observer = { x: 0.98, y: 0.1, z: 0.04 };
    expect(DEFAULT_TRACKLET_V).toBe(21);
    expect(populationLogPrior(state, observer, 0.6, null)).toBe(populationLogPrior(state, observer, 0.6, 21));
    expect(meanTrackletV([{ mag: 20.2, band: 'w' }, { mag: null, band: 'V' }])).toBeNull();
    expect(meanTrackletV([{ mag: 20.0, band: 'r' }, { mag: 20.4, band: null }])).toBeCloseTo(20.31, 10);
  });

  it('gives no weight to a state unbound from the Sun', () => {
    const observer = { x: 1, y: 0, z: 0 };
    expect(populationLogPrior({ tt: 0, x: 1.1, y: 0, z: 0, vx: 0, vy: 0.03, vz: 0 }, observer, 0.1, 21)).toBe(-Infinity);
  });

  it('rejects a non-positive range with a typed error naming the field', () => {
    expect(() => populationLogPrior({ tt: 0, x: 1.1, y: 0, z: 0, vx: 0, vy: 0.015, vz: 0 }, { x: 1, y: 0, z: 0 }, 0, 21)).toThrow(EstimationInputError);
    expect(() => populationLogPrior({ tt: 0, x: 1.1, y: 0, z: 0, vx: 0, vy: 0.015, vz: 0 }, { x: 1, y: 0, z: 0 }, 0, 21)).toThrow(/rangeAu/);
  });
});

describe('ranging with the population prior', () => {
  // A main-belt reference case (a 3.27 au, e 0.15, truth at 3.88 au) with 6 positions over 23 min.
  const c = referenceCase('ordinary', 57)!;
  const tracklet = trackletOf(c);
  const run = (ranging: { rangePrior: 'mixture' | 'population' | 'powerLaw' }) =>
    estimateObject({ objectId: c.id, observations: tracklet, now: new Date(c.lastObservationMs), members: 300, seed: 1, ranging }).summary.rangeAu;

  it('narrows the range of a slow main-belt mover compared with rho^0.5 and moves its median to within 10 % of the truth (reference truth)', () => {
    const population = run({ rangePrior: 'population' });
    const powerLaw = run({ rangePrior: 'powerLaw' });
    expect(population.p95 / population.p5).toBeLessThan(0.5 * (powerLaw.p95 / powerLaw.p5));
    expect(Math.abs(population.p50 / c.meanEpochRangeAu - 1)).toBeLessThan(0.1);
  });

  it('takes the mixture by default for a two-position tracklet too (its range is not measured at all, so the prior decides)', () => {
    const two = [tracklet[0]!, tracklet[tracklet.length - 1]!];
    const estimate = (ranging?: { rangePrior: 'mixture' }) =>
      estimateObject({ objectId: c.id, observations: two, now: new Date(c.lastObservationMs), members: 100, seed: 1, ranging }).summary.rangeAu;
    expect(estimate()).toEqual(estimate({ rangePrior: 'mixture' }));
  });

  it('rejects an unknown prior name with a typed error naming the field', () => {
    const bad = { rangePrior: 'flat' } as unknown as { rangePrior: 'population' };
    expect(() => run(bad)).toThrow(/ranging\.rangePrior/);
  });
});
