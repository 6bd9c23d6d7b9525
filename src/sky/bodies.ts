import * as Astronomy from 'astronomy-engine';
import { angleBetweenDeg, apparentFromEqd, rotateVector, type ApparentTarget, type ExactSiteFrame, type Vec3 } from './site.js';

/**
 * Topocentric apparent Sun and Moon in a site frame, from astronomy-engine's Sun (VSOP87,
 * aberration by light-time backdating) and Moon (Improved Lunar Ephemeris, Montenbruck &
 * Pfleger) geocentric vectors minus the observer's geocentric position.
 */

export interface SunInFrame extends ApparentTarget {
  distanceAu: number;
}

export interface MoonInFrame extends ApparentTarget {
  distanceKm: number;
  /** Sun-Moon-observer angle, degrees: 0 full, 180 new. */
  phaseAngleDeg: number;
  /** Illuminated fraction of the disc, (1 + cos phase) / 2 (Meeus eq. 48.1). */
  illuminatedFraction: number;
}

function unit(v: Vec3): Vec3 {
  const n = Math.hypot(v[0], v[1], v[2]);
  return [v[0] / n, v[1] / n, v[2] / n];
}

/**
 * Sun and Moon as seen from the site of `frame`: apparent altitude (refracted, astronomy-engine
 * 'normal'), geometric altitude (used for twilight, which by convention is unrefracted),
 * azimuth from north through east, apparent direction of date, and the Moon's phase angle.
 */
export function moonAndSunInFrame(frame: ExactSiteFrame): { sun: SunInFrame; moon: MoonInFrame } {
  const o = frame.observerGeocentricAu;
  const sunGeo = Astronomy.GeoVector(Astronomy.Body.Sun, frame.time, true);
  const moonGeo = Astronomy.GeoMoon(frame.time);
  const sunTopo: Vec3 = [sunGeo.x - o[0], sunGeo.y - o[1], sunGeo.z - o[2]];
  const moonTopo: Vec3 = [moonGeo.x - o[0], moonGeo.y - o[1], moonGeo.z - o[2]];
  const sun = apparentFromEqd(frame, unit(rotateVector(frame.eqjToEqd, sunTopo)), true);
  const moon = apparentFromEqd(frame, unit(rotateVector(frame.eqjToEqd, moonTopo)), true);
  // Phase angle at the Moon between the directions to the Sun and to the observer.
  const moonToSun: Vec3 = [sunTopo[0] - moonTopo[0], sunTopo[1] - moonTopo[1], sunTopo[2] - moonTopo[2]];
  const moonToObserver: Vec3 = [-moonTopo[0], -moonTopo[1], -moonTopo[2]];
  const phaseAngleDeg = angleBetweenDeg(moonToSun, moonToObserver);
  return {
    sun: { ...sun, distanceAu: Math.hypot(...sunTopo) },
    moon: {
      ...moon,
      distanceKm: Math.hypot(...moonTopo) * Astronomy.KM_PER_AU,
      phaseAngleDeg,
      illuminatedFraction: (1 + Math.cos(phaseAngleDeg * (Math.PI / 180))) / 2,
    },
  };
}
