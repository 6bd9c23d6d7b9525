import { AstroTime, Body, HelioState, HelioVector, MassProduct, Observer, ObserverVector } from 'astronomy-engine';

/**
 * An independent reference for the orbit tests, sharing no code with src/: classical RK4 with fixed
 * small steps, the Sun, the eight planets and the Moon straight from astronomy-engine at every stage
 * (no interpolation table), heliocentric with the indirect term; and a topocentric astrometric
 * direction with first-order light time and the Sun's barycentric motion over it. TT - UTC is the
 * constant 69.184 s (IERS Bulletin C 52: TAI - UTC = 37 s from 2017 January 1; TT - TAI = 32.184 s),
 * so the reference holds for instants from 2017 until the next leap second.
 */

export type V3 = [number, number, number];

const J2000_MS = Date.UTC(2000, 0, 1, 12);
const TT_MINUS_UTC_S = 69.184;
const C_AU_PER_DAY = (299_792.458 * 86_400) / 149_597_870.7;
const GM_SUN = MassProduct(Body.Sun);
const BODIES = [Body.Mercury, Body.Venus, Body.Earth, Body.Moon, Body.Mars, Body.Jupiter, Body.Saturn, Body.Uranus, Body.Neptune];
const GM = BODIES.map((b) => MassProduct(b));

/** TT days since J2000.0 of a UTC instant (2017 onwards). */
export const referenceTt = (timeUtc: Date) => (timeUtc.getTime() - J2000_MS) / 86_400_000 + TT_MINUS_UTC_S / 86_400;
const atTt = (tt: number) => AstroTime.FromTerrestrialTime(tt);

function acceleration(tt: number, r: V3): V3 {
  const rn = Math.hypot(...r);
  const acc: V3 = [(-GM_SUN * r[0]) / rn ** 3, (-GM_SUN * r[1]) / rn ** 3, (-GM_SUN * r[2]) / rn ** 3];
  const time = atTt(tt);
  BODIES.forEach((body, k) => {
    const p = HelioVector(body, time);
    const d: V3 = [p.x - r[0], p.y - r[1], p.z - r[2]];
    const dn = Math.hypot(...d), pn = Math.hypot(p.x, p.y, p.z);
    acc[0] += GM[k]! * (d[0] / dn ** 3 - p.x / pn ** 3);
    acc[1] += GM[k]! * (d[1] / dn ** 3 - p.y / pn ** 3);
    acc[2] += GM[k]! * (d[2] / dn ** 3 - p.z / pn ** 3);
  });
  return acc;
}

/** Heliocentric EQJ state (au, au/day) from (r0, v0) at TT t0 to TT t1 in equal RK4 steps of at most `maxStepDays`. */
export function referenceRk4(r0: V3, v0: V3, t0: number, t1: number, maxStepDays = 10 / 1440): { r: V3; v: V3 } {
  const steps = Math.max(1, Math.ceil(Math.abs(t1 - t0) / maxStepDays));
  const h = (t1 - t0) / steps;
  let r = r0, v = v0, t = t0;
  const add = (a: V3, b: V3, k: number): V3 => [a[0] + k * b[0], a[1] + k * b[1], a[2] + k * b[2]];
  for (let s = 0; s < steps; s++) {
    const a1 = acceleration(t, r);
    const r2 = add(r, v, h / 2), v2 = add(v, a1, h / 2);
    const a2 = acceleration(t + h / 2, r2);
    const r3 = add(r, v2, h / 2), v3 = add(v, a2, h / 2);
    const a3 = acceleration(t + h / 2, r3);
    const r4 = add(r, v3, h), v4 = add(v, a3, h);
    const a4 = acceleration(t + h, r4);
    r = [0, 1, 2].map((i) => r[i]! + (h / 6) * (v[i]! + 2 * v2[i]! + 2 * v3[i]! + v4[i]!)) as V3;
    v = [0, 1, 2].map((i) => v[i]! + (h / 6) * (a1[i]! + 2 * a2[i]! + 2 * a3[i]! + a4[i]!)) as V3;
    t += h;
  }
  return { r, v };
}

/** Unit vector from a geodetic site to the object at UTC `timeUtc` (astrometric: light time, no aberration). */
export function referenceDirection(r: V3, v: V3, timeUtc: Date, site: { latDeg: number; lonDeg: number; heightM: number }): V3 {
  const tt = referenceTt(timeUtc);
  const earth = HelioVector(Body.Earth, atTt(tt));
  const rotation = new AstroTime((timeUtc.getTime() - J2000_MS) / 86_400_000); // UT1 = UTC
  const siteVec = ObserverVector(rotation, new Observer(site.latDeg, site.lonDeg, site.heightM), false);
  const ssb = HelioState(Body.SSB, atTt(tt)); // the barycentre from the Sun; the Sun moves at -ssb.v
  const o: V3 = [earth.x + siteVec.x, earth.y + siteVec.y, earth.z + siteVec.z];
  let tau = 0;
  let rho: V3 = [0, 0, 0];
  for (let k = 0; k < 5; k++) {
    rho = [r[0] - v[0] * tau - o[0] + ssb.vx * tau, r[1] - v[1] * tau - o[1] + ssb.vy * tau, r[2] - v[2] * tau - o[2] + ssb.vz * tau];
    tau = Math.hypot(...rho) / C_AU_PER_DAY;
  }
  const n = Math.hypot(...rho);
  return [rho[0] / n, rho[1] / n, rho[2] / n];
}
