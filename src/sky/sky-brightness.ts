import type { Site } from '../config/schema.js';
import { SkyInputError, requireFinite } from './errors.js';
import { angleBetweenDeg, apparentInFrame } from './site.js';
import { skyAt, type SkyAt } from './timeline.js';

/**
 * Sky brightness in V by Krisciunas & Schaefer (1991), "A model of the brightness of
 * moonlight", PASP 103, 1033-1039 (KS91). Equation numbers and constants below are from
 * memory of the paper: its text was not at hand to check them (only its abstract, which
 * gives the 8-23 % agreement quoted below). One published case is checked: a reference
 * library's documented KS91 value (test/sky/sky-brightness.test.ts). Surface brightness is
 * carried in nanolamberts (nL) internally, as in the paper, and reported in V mag/arcsec^2.
 */

const DEG = Math.PI / 180;

/**
 * V-band extinction used when the site has no filter named 'V'. LOCAL CONSTANT: the site
 * schema has no site-level extinction field; 0.172 mag/airmass is the Mauna Kea value KS91 adopt.
 */
export const FALLBACK_V_EXTINCTION_MAG_PER_AIRMASS = 0.172;

export interface SkyBrightnessInput {
  /** Dark-sky V brightness at the zenith, mag/arcsec^2. */
  darkZenithVMagPerArcsec2: number;
  /** V extinction coefficient k, mag per airmass. */
  extinctionMagPerAirmass: number;
  /** Sun-Moon-Earth angle, degrees: 0 full, 180 new. */
  moonPhaseAngleDeg: number;
  /** Angle between the Moon and the sky position, degrees. */
  moonSeparationDeg: number;
  /** Altitude of the Moon's centre, degrees (<= 0: no moonlight). */
  moonAltitudeDeg: number;
  /** Altitude of the sky position, degrees (0..90). */
  targetAltitudeDeg: number;
}

export interface SkyBrightness {
  /** Total sky brightness (dark sky + moonlight), V mag/arcsec^2. */
  vMagPerArcsec2: number;
  /** Scattered moonlight at the position, nanolamberts (0 with the Moon down). */
  moonlightNanolamberts: number;
  /** Dark sky at the position, brightened by airmass (KS91 eq. 2), nanolamberts. */
  darkNanolamberts: number;
}

/** V surface brightness (mag/arcsec^2) to nanolamberts: B = 34.08 exp(20.7233 - 0.92104 V) (KS91 eq. 1). */
export function nanolambertsFromVMag(vMagPerArcsec2: number): number {
  requireFinite('vMagPerArcsec2', vMagPerArcsec2);
  return 34.08 * Math.exp(20.7233 - 0.92104 * vMagPerArcsec2);
}

/** Nanolamberts to V mag/arcsec^2, the inverse of KS91 eq. 1. */
export function vMagFromNanolamberts(nanolamberts: number): number {
  requireFinite('nanolamberts', nanolamberts);
  if (nanolamberts <= 0) throw new SkyInputError('nanolamberts', nanolamberts, 'expected a positive brightness');
  return (20.7233 - Math.log(nanolamberts / 34.08)) / 0.92104;
}

/** KS91 airmass for zenith distance Z (degrees): X = (1 - 0.96 sin^2 Z)^-1/2 (KS91 eq. 3, after Rozenberg 1966). */
export function airmassKS(zenithDistanceDeg: number): number {
  requireFinite('zenithDistanceDeg', zenithDistanceDeg, 0, 90);
  const s = Math.sin(zenithDistanceDeg * DEG);
  return 1 / Math.sqrt(1 - 0.96 * s * s);
}

/**
 * Illuminance of the Moon outside the atmosphere in foot-candles for phase angle alpha (degrees):
 * I* = 10^(-0.4 (3.84 + 0.026 |alpha| + 4e-9 alpha^4)) (KS91 eq. 20). The opposition surge near
 * full Moon (|alpha| < 7 deg) that KS91 mention is not modelled.
 */
export function moonIlluminanceKS(phaseAngleDeg: number): number {
  requireFinite('moonPhaseAngleDeg', phaseAngleDeg, 0, 180);
  const a = Math.abs(phaseAngleDeg);
  return Math.pow(10, -0.4 * (3.84 + 0.026 * a + 4e-9 * a ** 4));
}

/**
 * Scattering function f(rho) for separation rho (degrees): Rayleigh 10^5.36 (1.06 + cos^2 rho)
 * (KS91 eq. 17) plus Mie scattering, the larger of KS91's two forms, 10^(6.15 - rho/40) (eq. 21)
 * and 6.2e7 / rho^2 (eq. 19, for small separations). Read piecewise (eq. 19 below 10 deg, eq. 21
 * above), as commonly applied, the sky jumps by 0.16 mag at 10 deg; the larger of the two is
 * continuous, crosses over at 8.45 deg and is at most 0.16 mag brighter than the piecewise reading
 * between 8.45 and 10 deg (the brighter sky: the conservative side for exposure times).
 * Equation numbers and constants are from memory of the paper (its text was not at hand to check);
 * the model is not calibrated within a few degrees of the Moon. rho is held at 0.25 deg or more
 * (the Moon's radius) so the sky stays finite on the disc.
 */
export function scatteringFunctionKS(separationDeg: number): number {
  requireFinite('moonSeparationDeg', separationDeg, 0, 180);
  const rho = Math.max(separationDeg, 0.25);
  const cos = Math.cos(rho * DEG);
  const rayleigh = Math.pow(10, 5.36) * (1.06 + cos * cos);
  const mie = Math.max(Math.pow(10, 6.15 - rho / 40), 6.2e7 / (rho * rho));
  return rayleigh + mie;
}

/**
 * Sky brightness at a position, V mag/arcsec^2, by KS91:
 * moonlight B_moon = f(rho) I* 10^(-0.4 k X(Zm)) [1 - 10^(-0.4 k X(Z))] (eq. 15),
 * dark sky B_dark = B_zen 10^(-0.4 k (X(Z) - 1)) X(Z) (eq. 2), total = B_moon + B_dark.
 * With the Moon at or below the horizon the moonlight is 0 and only the dark term remains.
 * KS91 quote 8-23 % agreement with their data; twilight is not modelled (not night).
 */
export function skyBrightnessKS(input: SkyBrightnessInput): SkyBrightness {
  const darkZenith = requireFinite('darkZenithVMagPerArcsec2', input.darkZenithVMagPerArcsec2, 10, 25);
  const k = requireFinite('extinctionMagPerAirmass', input.extinctionMagPerAirmass, 0, 2);
  const phase = requireFinite('moonPhaseAngleDeg', input.moonPhaseAngleDeg, 0, 180);
  const separation = requireFinite('moonSeparationDeg', input.moonSeparationDeg, 0, 180);
  const moonAlt = requireFinite('moonAltitudeDeg', input.moonAltitudeDeg, -90, 90);
  const targetAlt = requireFinite('targetAltitudeDeg', input.targetAltitudeDeg, -90, 90);
  if (targetAlt < 0) {
    throw new SkyInputError('targetAltitudeDeg', targetAlt, 'the sky position is below the horizon');
  }
  const xTarget = airmassKS(90 - targetAlt);
  const darkNanolamberts = nanolambertsFromVMag(darkZenith) * Math.pow(10, -0.4 * k * (xTarget - 1)) * xTarget;
  let moonlightNanolamberts = 0;
  if (moonAlt > 0) {
    const xMoon = airmassKS(90 - moonAlt);
    moonlightNanolamberts =
      scatteringFunctionKS(separation) *
      moonIlluminanceKS(phase) *
      Math.pow(10, -0.4 * k * xMoon) *
      (1 - Math.pow(10, -0.4 * k * xTarget));
  }
  return {
    vMagPerArcsec2: vMagFromNanolamberts(darkNanolamberts + moonlightNanolamberts),
    moonlightNanolamberts,
    darkNanolamberts,
  };
}

export interface SkyBrightnessAt extends SkyBrightness {
  moonPhaseAngleDeg: number;
  moonIlluminatedFraction: number;
  moonSeparationDeg: number;
  moonAltitudeDeg: number;
  targetAltitudeDeg: number;
  extinctionMagPerAirmass: number;
}

/** The V extinction of a site: its filter named 'V', else the KS91 Mauna Kea value (see the constant). */
export function siteVExtinctionMagPerAirmass(site: Site): number {
  const v = site.imager.filters.find((f) => f.name === 'V');
  return v?.extinctionMagPerAirmass ?? FALLBACK_V_EXTINCTION_MAG_PER_AIRMASS;
}

/**
 * Sky brightness (KS91, see skyBrightnessKS) toward an astrometric ICRS position from a site at a time,
 * with the Moon's topocentric apparent position and phase angle from astronomy-engine.
 * Altitudes are apparent (refracted); the separation is between apparent directions.
 */
export function skyBrightnessAt(site: Site, timeUtc: Date, raDeg: number, decDeg: number): SkyBrightnessAt {
  return skyBrightnessInSky(site, skyAt(site, timeUtc), raDeg, decDeg);
}

/** As skyBrightnessAt, in a prepared sky (exact `skyAt` or interpolated `skyFromTimeline`), for many positions. */
export function skyBrightnessInSky(site: Site, sky: SkyAt, raDeg: number, decDeg: number): SkyBrightnessAt {
  const target = apparentInFrame(sky.frame, raDeg, decDeg);
  const moon = sky.moon;
  const moonSeparationDeg = angleBetweenDeg(target.eqdUnit, moon.eqdUnit);
  const extinctionMagPerAirmass = siteVExtinctionMagPerAirmass(site);
  const brightness = skyBrightnessKS({
    darkZenithVMagPerArcsec2: site.darkSkyVMagPerArcsec2,
    extinctionMagPerAirmass,
    moonPhaseAngleDeg: moon.phaseAngleDeg,
    moonSeparationDeg,
    moonAltitudeDeg: moon.altDeg,
    targetAltitudeDeg: target.altDeg,
  });
  return {
    ...brightness,
    moonPhaseAngleDeg: moon.phaseAngleDeg,
    moonIlluminatedFraction: moon.illuminatedFraction,
    moonSeparationDeg,
    moonAltitudeDeg: moon.altDeg,
    targetAltitudeDeg: target.altDeg,
    extinctionMagPerAirmass,
  };
}
