import type { Site, SiteLimits } from '../config/schema.js';
import { SkyInputError, requireDate, requireFinite } from './errors.js';
import { airmassKastenYoung, altitudeForAirmassDeg, angleBetweenDeg, apparentInFrame, type ApparentTarget } from './site.js';
import { skyAt, type SkyAt } from './timeline.js';

export type { SkyAt } from './timeline.js';

/**
 * Hard limits of a site for a target at an instant. Each check says whether it holds and by
 * how much (its margin, positive inside the limit, in the unit named beside it), so a reader
 * sees why a time is refused. None can be switched off: Sun avoidance and the site's limits
 * always apply (DESIGN.md, Safety).
 */

export type LimitName =
  | 'night'
  | 'sunAvoidance'
  | 'minAltitude'
  | 'horizonMask'
  | 'maxAirmass'
  | 'zenithKeepOut'
  | 'hourAngle'
  | 'declination'
  | 'moonSeparation'
  | 'maxRate';

/** Order in which limits are named when several bind at once. */
export const LIMIT_ORDER: readonly LimitName[] = [
  'night',
  'sunAvoidance',
  'minAltitude',
  'horizonMask',
  'maxAirmass',
  'zenithKeepOut',
  'hourAngle',
  'declination',
  'moonSeparation',
  'maxRate',
];

export type MarginUnit = 'deg' | 'h' | 'arcsec/s';

export interface LimitCheck {
  readonly limit: LimitName;
  readonly ok: boolean;
  /** How far inside the limit (negative: outside), in `unit`. */
  readonly margin: number;
  readonly unit: MarginUnit;
  /** e.g. 'altitude 31.2 deg, limit 25 deg'. */
  readonly detail: string;
}

/** A target at an instant: astrometric ICRS position seen from the site, degrees; rates in arcsec/s (RA rate x cos Dec). */
export interface TargetState {
  raDeg: number;
  decDeg: number;
  raRateArcsecPerS?: number | undefined;
  decRateArcsecPerS?: number | undefined;
}

export interface LimitReport {
  timeUtc: Date;
  ok: boolean;
  checks: LimitCheck[];
  /** Names of the failing limits in LIMIT_ORDER. */
  failing: LimitName[];
  /** Geometry the checks used. */
  target: { altDeg: number; azDeg: number; hourAngleH: number; airmass: number | null };
  sun: { altDeg: number; separationDeg: number };
  moon: { altDeg: number; separationDeg: number; illuminatedFraction: number };
}

/** Smallest Moon separation limit when it scales with illumination, degrees (schema: "at least 3 deg"). */
export const MIN_SCALED_MOON_SEPARATION_DEG = 3;

/**
 * A check whose detail text is only formatted when read: windows evaluate thousands of checks and
 * read a few. A class (prototype getter) keeps object creation fast; toJSON includes the detail.
 */
class Check implements LimitCheck {
  private text: string | undefined;
  constructor(
    readonly limit: LimitName,
    readonly ok: boolean,
    readonly margin: number,
    readonly unit: MarginUnit,
    private readonly describe: () => string,
  ) {}
  get detail(): string {
    this.text ??= this.describe();
    return this.text;
  }
  toJSON(): { limit: LimitName; ok: boolean; margin: number; unit: MarginUnit; detail: string } {
    return { limit: this.limit, ok: this.ok, margin: this.margin, unit: this.unit, detail: this.detail };
  }
}

function makeCheck(limit: LimitName, ok: boolean, margin: number, unit: MarginUnit, describe: () => string): LimitCheck {
  return new Check(limit, ok, margin, unit, describe);
}

/** Per-site constants of the limits, computed once per site and reused for every evaluation. */
export interface PreparedLimits {
  /** Apparent altitude where the Kasten & Young airmass equals maxAirmass, degrees (undefined without the limit). */
  maxAirmassAltitudeDeg: number | undefined;
}

/** Computes the per-site constants of the limits (see PreparedLimits). */
export function prepareLimits(site: Site): PreparedLimits {
  const max = site.limits.maxAirmass;
  return { maxAirmassAltitudeDeg: max === undefined ? undefined : altitudeForAirmassDeg(max) };
}

const f1 = (x: number) => x.toFixed(1);
const f2 = (x: number) => x.toFixed(2);

/**
 * Minimum altitude of the horizon mask at an azimuth (degrees from north through east), degrees:
 * piecewise-linear interpolation between the configured points, wrapping through north.
 * Returns 0 with no mask.
 */
export function horizonMaskAltitudeDeg(limits: SiteLimits, azDeg: number): number {
  const mask = limits.horizonMask;
  if (mask === undefined || mask.length === 0) return 0;
  const az = ((azDeg % 360) + 360) % 360;
  const points = [...mask].sort((a, b) => a.azDeg - b.azDeg);
  const first = points[0]!;
  const last = points[points.length - 1]!;
  if (points.length === 1) return first.minAltitudeDeg;
  // Wrap: the segment from the last point to the first point + 360.
  const ring = [{ azDeg: last.azDeg - 360, minAltitudeDeg: last.minAltitudeDeg }, ...points, { azDeg: first.azDeg + 360, minAltitudeDeg: first.minAltitudeDeg }];
  for (let i = 1; i < ring.length; i++) {
    const a = ring[i - 1]!;
    const b = ring[i]!;
    if (az >= a.azDeg && az <= b.azDeg) {
      const span = b.azDeg - a.azDeg;
      if (span <= 0) return Math.max(a.minAltitudeDeg, b.minAltitudeDeg);
      return a.minAltitudeDeg + ((az - a.azDeg) / span) * (b.minAltitudeDeg - a.minAltitudeDeg);
    }
  }
  return first.minAltitudeDeg;
}

/** Largest slope of the horizon mask, degrees of altitude per degree of azimuth (0 without a mask). */
export function horizonMaskMaxSlope(limits: SiteLimits): number {
  const mask = limits.horizonMask;
  if (mask === undefined || mask.length < 2) return 0;
  const points = [...mask].sort((a, b) => a.azDeg - b.azDeg);
  let slope = 0;
  for (let i = 0; i < points.length; i++) {
    const a = points[i]!;
    const b = points[(i + 1) % points.length]!;
    const span = i + 1 < points.length ? b.azDeg - a.azDeg : b.azDeg + 360 - a.azDeg;
    if (span > 0) slope = Math.max(slope, Math.abs(b.minAltitudeDeg - a.minAltitudeDeg) / span);
  }
  return slope;
}

/** Moon separation the site requires now, degrees (scaled by illumination if configured, at least 3 deg). */
export function requiredMoonSeparationDeg(limits: SiteLimits, illuminatedFraction: number): number {
  if (!limits.moonSeparationScalesWithIllumination) return limits.minMoonSeparationDeg;
  return Math.min(limits.minMoonSeparationDeg, Math.max(MIN_SCALED_MOON_SEPARATION_DEG, limits.minMoonSeparationDeg * illuminatedFraction));
}

/** Validates a target state, naming the field (with `where` as prefix, e.g. 'targetAt(2027-03-16T04:00:00Z)'). */
export function checkTargetState(target: TargetState, where = 'target'): TargetState {
  if (typeof target !== 'object' || target === null) throw new SkyInputError(where, target, 'expected { raDeg, decDeg, ... }');
  requireFinite(`${where}.raDeg`, target.raDeg);
  requireFinite(`${where}.decDeg`, target.decDeg, -90, 90);
  if (target.raRateArcsecPerS !== undefined) requireFinite(`${where}.raRateArcsecPerS`, target.raRateArcsecPerS);
  if (target.decRateArcsecPerS !== undefined) requireFinite(`${where}.decRateArcsecPerS`, target.decRateArcsecPerS);
  return target;
}

/** Evaluates every hard limit for a target in a prepared sky (see evaluateLimits). */
export function evaluateLimitsInSky(site: Site, sky: SkyAt, target: TargetState, prepared: PreparedLimits = prepareLimits(site)): LimitReport {
  const limits = site.limits;
  const apparent: ApparentTarget = apparentInFrame(sky.frame, target.raDeg, target.decDeg);
  const alt = apparent.altDeg;
  const checks: LimitCheck[] = [];

  const sunAlt = sky.sun.geometricAltDeg;
  const nightMargin = limits.nightSunAltitudeDeg - sunAlt;
  checks.push(
    makeCheck('night', nightMargin >= 0, nightMargin, 'deg', () => `Sun at ${f1(sunAlt)} deg, night needs it below ${limits.nightSunAltitudeDeg} deg`),
  );

  const sunSep = angleBetweenDeg(apparent.eqdUnit, sky.sun.eqdUnit);
  checks.push(
    makeCheck('sunAvoidance', sunSep >= limits.sunAvoidanceDeg, sunSep - limits.sunAvoidanceDeg, 'deg', () => `Sun ${f1(sunSep)} deg away, limit ${limits.sunAvoidanceDeg} deg`),
  );

  checks.push(
    makeCheck('minAltitude', alt >= limits.minAltitudeDeg, alt - limits.minAltitudeDeg, 'deg', () => `altitude ${f1(alt)} deg, limit ${limits.minAltitudeDeg} deg`),
  );

  if (limits.horizonMask !== undefined && limits.horizonMask.length > 0) {
    const maskAlt = horizonMaskAltitudeDeg(limits, apparent.azDeg);
    checks.push(
      makeCheck('horizonMask', alt >= maskAlt, alt - maskAlt, 'deg', () => `altitude ${f1(alt)} deg at azimuth ${f1(apparent.azDeg)} deg, mask ${f1(maskAlt)} deg there`),
    );
  }

  let airmass: number | null = null;
  if (limits.maxAirmass !== undefined) {
    const limitAlt = prepared.maxAirmassAltitudeDeg ?? altitudeForAirmassDeg(limits.maxAirmass);
    airmass = alt >= 0 ? airmassKastenYoung(Math.min(alt, 90)) : null;
    checks.push(
      makeCheck('maxAirmass', alt >= limitAlt, alt - limitAlt, 'deg', () =>
        airmass === null
          ? `below the horizon (altitude ${f1(alt)} deg), airmass limit ${limits.maxAirmass} (altitude ${f1(limitAlt)} deg)`
          : `airmass ${f2(airmass)}, limit ${limits.maxAirmass} (altitude ${f1(alt)} deg, limit ${f1(limitAlt)} deg)`),
    );
  } else if (alt >= 0) {
    airmass = airmassKastenYoung(Math.min(alt, 90));
  }

  if (site.mount === 'altaz') {
    const maxAlt = 90 - limits.zenithKeepOutDeg;
    checks.push(
      makeCheck('zenithKeepOut', alt <= maxAlt, maxAlt - alt, 'deg', () => `altitude ${f1(alt)} deg, alt-az mount keeps below ${f1(maxAlt)} deg`),
    );
  }

  const ha = apparent.hourAngleH;
  const haMargin = Math.min(ha - limits.hourAngleH.min, limits.hourAngleH.max - ha);
  checks.push(
    makeCheck('hourAngle', haMargin >= 0, haMargin, 'h', () => `hour angle ${f2(ha)} h, allowed ${limits.hourAngleH.min}..${limits.hourAngleH.max} h`),
  );

  const decMargin = Math.min(target.decDeg - limits.decDeg.min, limits.decDeg.max - target.decDeg);
  checks.push(
    makeCheck('declination', decMargin >= 0, decMargin, 'deg', () => `declination ${f1(target.decDeg)} deg, allowed ${limits.decDeg.min}..${limits.decDeg.max} deg`),
  );

  const moonSep = angleBetweenDeg(apparent.eqdUnit, sky.moon.eqdUnit);
  const moonNeed = requiredMoonSeparationDeg(limits, sky.moon.illuminatedFraction);
  checks.push(
    makeCheck('moonSeparation', moonSep >= moonNeed, moonSep - moonNeed, 'deg', () =>
      `Moon ${f1(moonSep)} deg away, limit ${f1(moonNeed)} deg` +
      (limits.moonSeparationScalesWithIllumination ? ` (${limits.minMoonSeparationDeg} deg x illuminated ${f2(sky.moon.illuminatedFraction)})` : '')),
  );

  if (target.raRateArcsecPerS !== undefined || target.decRateArcsecPerS !== undefined) {
    const rate = Math.hypot(target.raRateArcsecPerS ?? 0, target.decRateArcsecPerS ?? 0);
    checks.push(
      makeCheck('maxRate', rate <= limits.maxRateArcsecPerS, limits.maxRateArcsecPerS - rate, 'arcsec/s', () => `rate ${f2(rate)} arcsec/s, limit ${limits.maxRateArcsecPerS} arcsec/s`),
    );
  } else {
    checks.push(
      makeCheck('maxRate', true, limits.maxRateArcsecPerS, 'arcsec/s', () => `no rate given (taken as sidereal), limit ${limits.maxRateArcsecPerS} arcsec/s`),
    );
  }

  const failing = checks.filter((c) => !c.ok).map((c) => c.limit);
  return {
    timeUtc: sky.frame.timeUtc,
    ok: failing.length === 0,
    checks,
    failing,
    target: { altDeg: alt, azDeg: apparent.azDeg, hourAngleH: ha, airmass },
    sun: { altDeg: sunAlt, separationDeg: sunSep },
    moon: { altDeg: sky.moon.altDeg, separationDeg: moonSep, illuminatedFraction: sky.moon.illuminatedFraction },
  };
}

/**
 * Every hard limit of the site for a target (astrometric ICRS, degrees; optional rates in arcsec/s)
 * at `timeUtc`. Altitudes are apparent with refraction (site.ts); the night test uses the Sun's
 * geometric altitude, as twilight is defined; separations are between apparent directions.
 */
export function evaluateLimits(site: Site, timeUtc: Date, target: TargetState): LimitReport {
  requireDate('timeUtc', timeUtc);
  checkTargetState(target);
  return evaluateLimitsInSky(site, skyAt(site, timeUtc), target);
}
