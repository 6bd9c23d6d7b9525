import * as Astronomy from 'astronomy-engine';
import type { Site } from '../../src/config/schema.js';

/**
 * Every hard limit of a site re-evaluated with astronomy-engine directly, for the window and plan
 * re-checks in test/sky and test/planning. Shares no code with src/sky: the target's apparent place
 * comes from the library's star path (DefineStar + Equator of date with aberration + Horizon with
 * its 'normal' refraction), the Sun and Moon from its Equator, hour angle from its SiderealTime,
 * airmass from Kasten & Young (1989) eq. 3 written here, the mask interpolated here, and the Moon's
 * illuminated fraction from the topocentric phase angle (docs/sky.md says why).
 *
 * The two implementations differ slightly at a limit (the library's aberration and refraction paths
 * are not ours): a failure counts only beyond `slack`, in the limit's unit.
 */

export interface TargetAt {
  raDeg: number;
  decDeg: number;
  raRateArcsecPerS?: number | undefined;
  decRateArcsecPerS?: number | undefined;
}

export interface IndependentFailure {
  limit: string;
  /** How far outside the limit, in its unit (deg, h, or arcsec/s). */
  by: number;
}

/** Default slack: 0.003 deg (11") for angles, 0.0005 h (1.8 s) of hour angle, 0.001 arcsec/s of rate. */
export const SLACK = { deg: 0.003, h: 0.0005, rate: 0.001 };

const STAR = Astronomy.Body.Star8; // a body of our own in the library's star table, not used elsewhere

/** Kasten & Young (1989) eq. 3, apparent altitude in degrees. */
function airmass(altDeg: number): number {
  return 1 / (Math.sin((altDeg * Math.PI) / 180) + 0.50572 * Math.pow(altDeg + 6.07995, -1.6364));
}

function maskAltitude(mask: readonly { azDeg: number; minAltitudeDeg: number }[], azDeg: number): number {
  const points = [...mask].sort((a, b) => a.azDeg - b.azDeg);
  const first = points[0]!, last = points[points.length - 1]!;
  const ring = [{ azDeg: last.azDeg - 360, minAltitudeDeg: last.minAltitudeDeg }, ...points, { azDeg: first.azDeg + 360, minAltitudeDeg: first.minAltitudeDeg }];
  for (let i = 0; i + 1 < ring.length; i++) {
    const a = ring[i]!, b = ring[i + 1]!;
    if (azDeg >= a.azDeg && azDeg <= b.azDeg) {
      return b.azDeg === a.azDeg ? a.minAltitudeDeg : a.minAltitudeDeg + ((azDeg - a.azDeg) / (b.azDeg - a.azDeg)) * (b.minAltitudeDeg - a.minAltitudeDeg);
    }
  }
  return first.minAltitudeDeg;
}

/** The limits the target fails at `t` by more than the slack, each with how far. */
export function independentLimitFailures(site: Site, t: Date, target: TargetAt, slack = SLACK): IndependentFailure[] {
  const { limits, location } = site;
  const observer = new Astronomy.Observer(location.latDeg, location.lonDeg, location.heightM);
  const time = Astronomy.MakeTime(t);
  Astronomy.DefineStar(STAR, target.raDeg / 15, target.decDeg, 1000);
  const star = Astronomy.Equator(STAR, time, observer, true, true);
  const hor = Astronomy.Horizon(time, observer, star.ra, star.dec, 'normal');
  const sun = Astronomy.Equator(Astronomy.Body.Sun, time, observer, true, true);
  const sunGeometricAlt = Astronomy.Horizon(time, observer, sun.ra, sun.dec).altitude;
  const moon = Astronomy.Equator(Astronomy.Body.Moon, time, observer, true, true);
  const out: IndependentFailure[] = [];
  const need = (limit: string, value: number, unitSlack: number) => {
    if (value < -unitSlack) out.push({ limit, by: -value });
  };
  const alt = hor.altitude;
  need('night', limits.nightSunAltitudeDeg - sunGeometricAlt, slack.deg);
  need('sunAvoidance', Astronomy.AngleBetween(star.vec, sun.vec) - limits.sunAvoidanceDeg, slack.deg);
  need('minAltitude', alt - limits.minAltitudeDeg, slack.deg);
  if (limits.horizonMask !== undefined && limits.horizonMask.length > 0) need('horizonMask', alt - maskAltitude(limits.horizonMask, hor.azimuth), slack.deg);
  if (limits.maxAirmass !== undefined) {
    // Compared as an altitude, like the limit: the airmass of the target must not exceed maxAirmass.
    if (alt <= 0) out.push({ limit: 'maxAirmass', by: Infinity });
    else if (airmass(alt) > limits.maxAirmass) {
      let lo = 0, hi = 90; // altitude where the airmass is exactly maxAirmass
      for (let k = 0; k < 60; k++) { const mid = (lo + hi) / 2; if (airmass(mid) > limits.maxAirmass) lo = mid; else hi = mid; }
      need('maxAirmass', alt - hi, slack.deg);
    }
  }
  if (site.mount === 'altaz') need('zenithKeepOut', 90 - limits.zenithKeepOutDeg - alt, slack.deg);
  let ha = Astronomy.SiderealTime(time) + location.lonDeg / 15 - star.ra;
  ha = ((((ha + 12) % 24) + 24) % 24) - 12;
  need('hourAngle', Math.min(ha - limits.hourAngleH.min, limits.hourAngleH.max - ha), slack.h);
  need('declination', Math.min(target.decDeg - limits.decDeg.min, limits.decDeg.max - target.decDeg), 0);
  // Topocentric illuminated fraction: phase angle at the Moon between the Sun and the site.
  const site0 = Astronomy.ObserverVector(time, observer, false);
  const moonGeo = Astronomy.GeoMoon(time);
  const sunGeo = Astronomy.GeoVector(Astronomy.Body.Sun, time, true);
  const phase = Astronomy.AngleBetween(
    new Astronomy.Vector(sunGeo.x - moonGeo.x, sunGeo.y - moonGeo.y, sunGeo.z - moonGeo.z, time),
    new Astronomy.Vector(site0.x - moonGeo.x, site0.y - moonGeo.y, site0.z - moonGeo.z, time),
  );
  const k = (1 + Math.cos((phase * Math.PI) / 180)) / 2;
  const required = limits.moonSeparationScalesWithIllumination ? Math.min(limits.minMoonSeparationDeg, Math.max(3, limits.minMoonSeparationDeg * k)) : limits.minMoonSeparationDeg;
  need('moonSeparation', Astronomy.AngleBetween(star.vec, moon.vec) - required, slack.deg);
  need('maxRate', limits.maxRateArcsecPerS - Math.hypot(target.raRateArcsecPerS ?? 0, target.decRateArcsecPerS ?? 0), slack.rate);
  return out;
}
