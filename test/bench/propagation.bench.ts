/**
 * Propagation benchmarks and accuracy measurements for src/orbit.
 * Run: npx tsx test/bench/propagation.bench.ts [speed|accuracy|all]   (default all)
 * Prints:
 *   speed    - ensembles of 1000/3000/5000 orbits over 48 h at 10-min output steps: propagation time,
 *              light-time corrected topocentric places time, steps and perturber nodes;
 *              astronomy-engine's GravitySimulator on the same task, for comparison.
 *   accuracy - test particles started on planets vs the library's planets (30 days, from Earth),
 *              step halving of our integrator and of GravitySimulator for a distant and a close
 *              (0.002 au) body, our places vs a tight-step RK4 for passes at 0.002/0.01/0.05 au.
 */
import { AstroTime, Body, GravitySimulator, HelioState, HelioVector, MassProduct, Observer, ObserverVector, StateVector } from 'astronomy-engine';
import { stateFromPerihelionElements, type HeliocentricState } from '../../src/orbit/elements.js';
import { placesFromTrajectory, streamEnsemblePlaces } from '../../src/orbit/ephemeris.js';
import { propagateEnsemble, streamEnsemble, type PropagationOptions } from '../../src/orbit/propagate.js';
import { ttFromTtIso, ttFromUtc, utcFromTt } from '../../src/orbit/time.js';

const mode = process.argv[2] ?? 'all';
const T = (tt: number) => AstroTime.FromTerrestrialTime(tt);
const ARCSEC = (180 / Math.PI) * 3600;
const site = { latDeg: 34.21, lonDeg: -107.62, heightM: 2310 }; // invented demo site
type V3 = [number, number, number];
const angle = (a: V3, b: V3) => {
  const c: V3 = [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]];
  return Math.atan2(Math.hypot(...c), a[0] * b[0] + a[1] * b[1] + a[2] * b[2]) * ARCSEC;
};
let seed = 2027;
const rand = () => ((seed = (seed * 1103515245 + 12345) % 2 ** 31) / 2 ** 31);

/** A close pass: `missAu` from Earth's centre at `tt`, 9 km/s relative (same construction as the tests). */
function closeApproacher(missAu: number, tt: number): HeliocentricState {
  const earth = HelioState(Body.Earth, T(tt));
  const k = 86_400 / 149_597_870.7;
  const rel: V3 = [0.6, -0.5, 0.62];
  const n = Math.hypot(...rel);
  const u: V3 = [rel[0] / n, rel[1] / n, rel[2] / n];
  const off: V3 = [u[1], -u[0], 0];
  const on = Math.hypot(...off);
  return {
    tt,
    x: earth.x + (missAu * off[0]) / on, y: earth.y + (missAu * off[1]) / on, z: earth.z + (missAu * off[2]) / on,
    vx: earth.vx + 9 * k * u[0], vy: earth.vy + 9 * k * u[1], vz: earth.vz + 9 * k * u[2],
  };
}

/** An ensemble like virtual orbits of one tracklet: a nominal state with position and velocity spread. */
function ensembleAround(nominal: HeliocentricState, n: number, spreadAu: number, spreadAuPerDay: number): HeliocentricState[] {
  return Array.from({ length: n }, () => ({
    tt: nominal.tt,
    x: nominal.x + spreadAu * (rand() - 0.5), y: nominal.y + spreadAu * (rand() - 0.5), z: nominal.z + spreadAu * (rand() - 0.5),
    vx: nominal.vx + spreadAuPerDay * (rand() - 0.5), vy: nominal.vy + spreadAuPerDay * (rand() - 0.5), vz: nominal.vz + spreadAuPerDay * (rand() - 0.5),
  }));
}

function speed(): void {
  console.log('== speed: ensembles over 48 h, output every 10 min (289 times), one site ==');
  const start = new Date('2027-03-04T00:00:00Z');
  const t0 = ttFromUtc(start);
  const timesUtc = Array.from({ length: 289 }, (_, k) => new Date(start.getTime() + k * 600_000));
  const timesTt = timesUtc.map(ttFromUtc);
  const far = stateFromPerihelionElements({ qAu: 0.9, e: 0.35, iDeg: 8, nodeDeg: 160, periDeg: 40, tpTt: t0 - 30 }, t0);
  const cases: [string, HeliocentricState][] = [
    ['distant (0.2-0.4 au from Earth)', far],
    ['close (passes 0.005 au at +24 h)', closeApproacher(0.005, t0 + 1)],
  ];
  for (const [label, nominal] of cases) {
    for (const n of [1000, 3000, 5000]) {
      const members = ensembleAround(nominal, n, 1e-4, 1e-5);
      const best = (fn: () => void) => {
        let min = Infinity;
        for (let rep = 0; rep < 3; rep++) {
          const a = performance.now();
          fn();
          min = Math.min(min, performance.now() - a);
        }
        return min;
      };
      let steps = 0;
      const streamMs = best(() => {
        steps = streamEnsemble(members, timesTt, () => undefined).stepCount;
      });
      const arraysMs = best(() => propagateEnsemble(members, timesTt));
      let _checksum = 0; // summed so the places are used; never printed
      const placesMs = best(() => {
        streamEnsemblePlaces(members, site, timesUtc, (_k, p) => {
          _checksum += p.raDeg[0]!;
        });
      });
      console.log(
        `${label}, ${n} orbits (${steps} steps): propagate ${streamMs.toFixed(0)} ms streamed / ${arraysMs.toFixed(0)} ms into arrays; ` +
          `propagate + light-time topocentric places for all ${n * 289} rows ${placesMs.toFixed(0)} ms (best of 3)`,
      );
    }
  }
  // astronomy-engine's GravitySimulator on the same task with 10-min steps (its method is second order).
  for (const n of [100, 1000]) {
    const members = ensembleAround(far, n, 1e-4, 1e-5);
    const a = performance.now();
    const sim = new GravitySimulator(Body.Sun, T(t0), members.map((s) => new StateVector(s.x, s.y, s.z, s.vx, s.vy, s.vz, T(t0))));
    for (let k = 1; k < timesTt.length; k++) sim.Update(T(timesTt[k]!));
    console.log(`GravitySimulator, ${n} orbits, 288 steps of 10 min: ${(performance.now() - a).toFixed(0)} ms (propagation only)`);
  }
}

function planetTracking(body: Body, startIso: string, days: number): { worst: number; minDelta: number } {
  const t0 = ttFromTtIso('start', startIso);
  const s = HelioState(body, T(t0));
  const times = Array.from({ length: days + 1 }, (_, k) => t0 + k);
  const tr = propagateEnsemble([{ tt: t0, x: s.x, y: s.y, z: s.z, vx: s.vx, vy: s.vy, vz: s.vz }], times, { omitBodies: [body] });
  let worst = 0, minDelta = Infinity;
  times.forEach((t, k) => {
    const e = HelioVector(Body.Earth, T(t)), p = HelioVector(body, T(t));
    const lib: V3 = [p.x - e.x, p.y - e.y, p.z - e.z];
    worst = Math.max(worst, angle([tr.positionsAu[3 * k]! - e.x, tr.positionsAu[3 * k + 1]! - e.y, tr.positionsAu[3 * k + 2]! - e.z], lib));
    minDelta = Math.min(minDelta, Math.hypot(...lib));
  });
  return { worst, minDelta };
}

function geocentricDirection(r: V3, tt: number): V3 {
  const e = HelioVector(Body.Earth, T(tt));
  return [r[0] - e.x, r[1] - e.y, r[2] - e.z];
}

function oursAt(start: HeliocentricState, tt: number, options: PropagationOptions): V3 {
  const tr = propagateEnsemble([start], [tt], options);
  return [tr.positionsAu[0]!, tr.positionsAu[1]!, tr.positionsAu[2]!];
}

function simAt(start: HeliocentricState, tt: number, stepDays: number): V3 {
  const sim = new GravitySimulator(Body.Sun, T(start.tt), [new StateVector(start.x, start.y, start.z, start.vx, start.vy, start.vz, T(start.tt))]);
  const n = Math.ceil(Math.abs(tt - start.tt) / stepDays);
  let end: StateVector[] = [];
  for (let k = 1; k <= n; k++) end = sim.Update(T(start.tt + ((tt - start.tt) * k) / n));
  return [end[0]!.x, end[0]!.y, end[0]!.z];
}

// Independent reference: fixed-step RK4, planets and Moon from astronomy-engine at every stage.
const BODIES = [Body.Mercury, Body.Venus, Body.Earth, Body.Moon, Body.Mars, Body.Jupiter, Body.Saturn, Body.Uranus, Body.Neptune];
const GM = BODIES.map((b) => MassProduct(b));
const GM_SUN = MassProduct(Body.Sun);
function acc(tt: number, r: V3): V3 {
  const rn = Math.hypot(...r);
  const a: V3 = [(-GM_SUN * r[0]) / rn ** 3, (-GM_SUN * r[1]) / rn ** 3, (-GM_SUN * r[2]) / rn ** 3];
  BODIES.forEach((b, k) => {
    const p = HelioVector(b, T(tt));
    const pv: V3 = [p.x, p.y, p.z];
    const d: V3 = [pv[0] - r[0], pv[1] - r[1], pv[2] - r[2]];
    const dn = Math.hypot(...d), pn = Math.hypot(...pv);
    for (let i = 0; i < 3; i++) a[i] = a[i]! + GM[k]! * (d[i]! / dn ** 3 - pv[i]! / pn ** 3);
  });
  return a;
}
function rk4(start: HeliocentricState, tEnd: number, stepDays: number): { r: V3; v: V3 } {
  let r: V3 = [start.x, start.y, start.z], v: V3 = [start.vx, start.vy, start.vz];
  const n = Math.ceil(Math.abs(tEnd - start.tt) / stepDays), h = (tEnd - start.tt) / n;
  let t = start.tt;
  const add = (a: V3, b: V3, k: number): V3 => [a[0] + k * b[0], a[1] + k * b[1], a[2] + k * b[2]];
  for (let s = 0; s < n; s++) {
    const a1 = acc(t, r);
    const v2 = add(v, a1, h / 2), a2 = acc(t + h / 2, add(r, v, h / 2));
    const v3 = add(v, a2, h / 2), a3 = acc(t + h / 2, add(r, v2, h / 2));
    const v4 = add(v, a3, h), a4 = acc(t + h, add(r, v3, h));
    r = [0, 1, 2].map((i) => r[i]! + (h / 6) * (v[i]! + 2 * v2[i]! + 2 * v3[i]! + v4[i]!)) as V3;
    v = [0, 1, 2].map((i) => v[i]! + (h / 6) * (a1[i]! + 2 * a2[i]! + 2 * a3[i]! + a4[i]!)) as V3;
    t += h;
  }
  return { r, v };
}
/** Topocentric direction with first-order light time and the Sun's barycentric motion over it (a barycentric difference). */
function topocentric(r: V3, v: V3, tt: number): V3 {
  const when = utcFromTt(tt);
  const e = HelioVector(Body.Earth, T(tt));
  const o = ObserverVector(when, new Observer(site.latDeg, site.lonDeg, site.heightM), false);
  const ssb = HelioState(Body.SSB, T(tt));
  let rho: V3 = [r[0] - e.x - o.x, r[1] - e.y - o.y, r[2] - e.z - o.z];
  for (let k = 0; k < 4; k++) {
    const tau = Math.hypot(...rho) / 173.1446326846693;
    rho = [r[0] - v[0] * tau - e.x - o.x + ssb.vx * tau, r[1] - v[1] * tau - e.y - o.y + ssb.vy * tau, r[2] - v[2] * tau - e.z - o.z + ssb.vz * tau];
  }
  return rho;
}

function accuracy(): void {
  console.log('== accuracy: test particle on a planet vs the library planet, 30 days, max angle from Earth ==');
  for (const [body, dates] of [
    [Body.Mars, ['2024-01-01', '2024-09-01', '2025-01-01', '2025-05-01', '2026-01-01', '2026-09-01', '2027-01-01', '2027-05-01', '2028-05-01']],
    [Body.Venus, ['2026-01-01', '2026-05-01', '2026-09-01', '2027-01-01', '2027-09-01']],
    [Body.Jupiter, ['2026-05-01']],
    [Body.Moon, ['2026-12-01']],
  ] as [Body, string[]][]) {
    for (const d of dates) {
      const { worst, minDelta } = planetTracking(body, `${d}T00:00:00`, 30);
      console.log(`${body} from ${d}: ${worst.toFixed(2)} arcsec (closest ${minDelta.toFixed(3)} au)`);
    }
  }

  console.log('== accuracy: step halving, geocentric direction after the span ==');
  const t0 = ttFromTtIso('t0', '2027-03-04T00:00:00');
  const distant = stateFromPerihelionElements({ qAu: 0.7, e: 0.3, iDeg: 5, nodeDeg: 40, periDeg: 100, tpTt: t0 + 10 }, t0);
  const close = closeApproacher(0.002, t0 + 1.5);
  const closeStart = { ...close };
  for (const [label, start, tEnd] of [
    ['distant, 30 days', distant, t0 + 30],
    ['0.002 au pass, 3 days centred on closest approach', closeStart, closeStart.tt + 1.5],
  ] as [string, HeliocentricState, number][]) {
    const startAt = label.startsWith('0.002') ? (() => {
      // Run the pass from 1.5 days before closest approach.
      const back = propagateEnsemble([start], [start.tt - 1.5], { stepFraction: 0.0025 });
      const p = back.positionsAu, v = back.velocitiesAuPerDay;
      return { tt: start.tt - 1.5, x: p[0]!, y: p[1]!, z: p[2]!, vx: v[0]!, vy: v[1]!, vz: v[2]! };
    })() : start;
    const reference = oursAt(startAt, tEnd, { stepFraction: 0.0025 });
    for (const f of [0.04, 0.02, 0.01, 0.005]) {
      const tr = propagateEnsemble([startAt], [tEnd], { stepFraction: f });
      console.log(`ours ${label}, stepFraction ${f}: ${angle(geocentricDirection([tr.positionsAu[0]!, tr.positionsAu[1]!, tr.positionsAu[2]!], tEnd), geocentricDirection(reference, tEnd)).toFixed(4)} arcsec from stepFraction 0.0025 (${tr.stepCount} steps)`);
    }
    let previous: V3 | null = null;
    for (const h of [0.08, 0.04, 0.02, 0.01]) {
      const sim = simAt(startAt, tEnd, h);
      const vsOurs = angle(geocentricDirection(sim, tEnd), geocentricDirection(reference, tEnd));
      const change = previous ? angle(geocentricDirection(sim, tEnd), geocentricDirection(previous, tEnd)) : NaN;
      console.log(`GravitySimulator ${label}, step ${h} d: ${vsOurs.toFixed(3)} arcsec from ours; change on halving ${change.toFixed(3)} arcsec`);
      previous = sim;
    }
    const noMoon = oursAt(startAt, tEnd, { stepFraction: 0.0025, omitBodies: [Body.Moon] });
    console.log(`ours without the Moon, ${label}: ${angle(geocentricDirection(noMoon, tEnd), geocentricDirection(reference, tEnd)).toFixed(3)} arcsec from ours with it; ` +
      `${angle(geocentricDirection(noMoon, tEnd), geocentricDirection(simAt(startAt, tEnd, 0.01), tEnd)).toFixed(3)} arcsec from GravitySimulator (0.01 d)`);
  }

  console.log('== accuracy: topocentric RA/Dec vs an independent RK4 (10-min fixed steps), 3 days centred on closest approach ==');
  for (const missAu of [0.002, 0.01, 0.05]) {
    const mid = closeApproacher(missAu, t0 + 1.5);
    const timesTt = Array.from({ length: 13 }, (_, k) => mid.tt - 1.5 + k * 0.25);
    const tr = propagateEnsemble([mid], timesTt);
    const places = placesFromTrajectory(tr, site, timesTt.map(utcFromTt));
    let worst = 0;
    timesTt.forEach((tt, k) => {
      const ref = rk4(mid, tt, 10 / 1440);
      const ra = (places.raDeg[k]! * Math.PI) / 180, dec = (places.decDeg[k]! * Math.PI) / 180;
      worst = Math.max(worst, angle([Math.cos(dec) * Math.cos(ra), Math.cos(dec) * Math.sin(ra), Math.sin(dec)], topocentric(ref.r, ref.v, tt)));
    });
    console.log(`pass at ${missAu} au: worst ${worst.toFixed(5)} arcsec over ${timesTt.length} times (${tr.stepCount} steps)`);
  }
}

if (mode === 'speed' || mode === 'all') speed();
if (mode === 'accuracy' || mode === 'all') accuracy();
