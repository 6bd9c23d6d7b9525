import { BaryState, Body, GeoMoon, HelioVector } from 'astronomy-engine';
import { referenceAstroTimeOfTt } from './reference-time.js';

/**
 * Point masses of the reference dynamics, barycentric: the Sun, the eight
 * planets and the Moon, each at astronomy-engine's position (evaluated at
 * every force evaluation; no table, no interpolation). GM of the Sun is the
 * Gaussian constant squared, k^2 (IAU 1976 / IAU 2012 B2); the planets' from
 * the Sun-to-planet mass ratios of the IAU 2009 system of constants (Luzum et
 * al. 2011, Celest. Mech. Dyn. Astr. 110, 293, table 1; planetary systems
 * with their moons except the Earth and the Moon, which are separate bodies),
 * values written from memory of that table. Units: au, day, au^3/day^2.
 */
export const GM_SUN = 0.01720209895 ** 2;
const MASS_RATIO: readonly [Body, number][] = [
  [Body.Mercury, 6_023_597.4],
  [Body.Venus, 408_523.719],
  [Body.Earth, 332_946.048_7],
  [Body.Mars, 3_098_703.59],
  [Body.Jupiter, 1_047.348_644],
  [Body.Saturn, 3_497.901_8],
  [Body.Uranus, 22_902.98],
  [Body.Neptune, 19_412.26],
];
/** Earth-to-Moon mass ratio (IAU 2009). */
const EARTH_MOON_RATIO = 81.300_569_08;
/** GM of each attracting body, in BODY order: Sun, the planets (MASS_RATIO order), Moon. */
export const BODY_GM: readonly number[] = [GM_SUN, ...MASS_RATIO.map(([, ratio]) => GM_SUN / ratio), GM_SUN / MASS_RATIO[2]![1] / EARTH_MOON_RATIO];
export const BODY_NAMES: readonly string[] = ['Sun', ...MASS_RATIO.map(([b]) => String(b)), 'Moon'];
export const EARTH_BODY = 3;
export const SUN_BODY = 0;
/** Speed of light, au/day (IAU 2012: c = 299 792 458 m/s, au = 149 597 870 700 m). */
export const LIGHT_AU_PER_DAY = (299_792_458 * 86_400) / 149_597_870_700;
export const KM_PER_AU = 149_597_870.7;

/** Barycentric EQJ positions (au) of every attracting body at TT `tt`, flat [x0, y0, z0, x1, ...]. */
export function bodyPositions(tt: number): Float64Array {
  const time = referenceAstroTimeOfTt(tt);
  const sun = BaryState(Body.Sun, time);
  const out = new Float64Array(3 * BODY_GM.length);
  out[0] = sun.x; out[1] = sun.y; out[2] = sun.z;
  MASS_RATIO.forEach(([body], k) => {
    const h = HelioVector(body, time);
    out[3 * (k + 1)] = h.x + sun.x;
    out[3 * (k + 1) + 1] = h.y + sun.y;
    out[3 * (k + 1) + 2] = h.z + sun.z;
  });
  const m = 3 * (BODY_GM.length - 1);
  const e = 3 * EARTH_BODY;
  const moon = GeoMoon(time);
  out[m] = out[e]! + moon.x; out[m + 1] = out[e + 1]! + moon.y; out[m + 2] = out[e + 2]! + moon.z;
  return out;
}

/** Barycentric EQJ state (au, au/day) of the Earth's centre at TT `tt`. */
export function earthState(tt: number): { r: [number, number, number]; v: [number, number, number] } {
  const s = BaryState(Body.Earth, referenceAstroTimeOfTt(tt));
  return { r: [s.x, s.y, s.z], v: [s.vx, s.vy, s.vz] };
}

/** Barycentric EQJ state of the Sun at TT `tt`. */
export function sunState(tt: number): { r: [number, number, number]; v: [number, number, number] } {
  const s = BaryState(Body.Sun, referenceAstroTimeOfTt(tt));
  return { r: [s.x, s.y, s.z], v: [s.vx, s.vy, s.vz] };
}
