import type { Site, Spectrograph } from '../config/schema.js';
import { siteVExtinctionMagPerAirmass } from '../sky/sky-brightness.js';
import { erf, seeingAtAirmass, sourceRateForSnr, type CcdSignal } from './ccd.js';
import { checkConditions, PlanConfigError, type ExposureLimit, type ObservingConditions } from './conditions.js';
import { PhotometryInputError, requireFinite, requireInRange, requireNonNegative, requirePositive } from './errors.js';

/**
 * Slit spectroscopy: slit loss, photon rates from physical constants, SNR per
 * resolution element at the reference wavelength, drift out of the slit, and
 * the limiting magnitude. Wavelengths in nm, angles in arcsec, times in s.
 */

/** Planck constant, erg s (CODATA 2018, exact). */
export const PLANCK_ERG_S = 6.62607015e-27;
/** Speed of light, cm/s (exact). */
export const LIGHT_CM_PER_S = 2.99792458e10;
/**
 * Flux density of a V = 0 star, erg s^-1 cm^-2 A^-1: 363.1e-11 (Bessell,
 * Castelli & Plez 1998, A&A 333, 231, table A2; Bessell 1979 gives 3.6e-9).
 * The paper was not at hand; several independent public codes quote this value
 * from that table.
 */
export const V0_FLUX_ERG_PER_S_CM2_A = 3.631e-9;

/**
 * Photons per second per cm^2 per nm from a V = 0 source at wavelength
 * `wavelengthNm`: F_lambda(V=0) x 10 A/nm / (h c / lambda). About 1.0e4 at 550 nm
 * (the familiar 1000 photons s^-1 cm^-2 A^-1). The V zero point is used at the
 * spectrograph's reference wavelength: exact near 550 nm, an approximation
 * elsewhere (it assumes the object's colour is that of a V = 0 star there).
 */
export function v0PhotonFluxPerCm2PerNm(wavelengthNm: number): number {
  requireInRange('wavelengthNm', wavelengthNm, 100, 30_000);
  const photonEnergyErg = (PLANCK_ERG_S * LIGHT_CM_PER_S) / (wavelengthNm * 1e-7);
  return (V0_FLUX_ERG_PER_S_CM2_A * 10) / photonEnergyErg;
}

/** Clear collecting area, cm^2: pi/4 D^2 (1 - obstruction^2), obstruction as a diameter fraction. */
export function collectingAreaCm2(apertureM: number, obstructionFraction: number): number {
  requirePositive('apertureM', apertureM);
  requireInRange('obstructionFraction', obstructionFraction, 0, 0.99);
  const dCm = apertureM * 100;
  return (Math.PI / 4) * dCm * dCm * (1 - obstructionFraction ** 2);
}

/**
 * Fraction of a Gaussian seeing profile passing a long slit of width w centred
 * on it (one dimension): erf(w sqrt(ln 2) / FWHM) = erf(w / (2 sqrt 2 sigma)).
 * A slit as wide as the FWHM passes erf(sqrt(ln 2)) = 0.7610.
 */
export function slitTransmission(slitArcsec: number, fwhmArcsec: number): number {
  requirePositive('slitArcsec', slitArcsec);
  requirePositive('fwhmArcsec', fwhmArcsec);
  return erf((slitArcsec * Math.sqrt(Math.LN2)) / fwhmArcsec);
}

/**
 * Extraction width along the slit per FWHM: +-1 FWHM (common practice),
 * passing erf(2 sqrt(ln 2)) = 0.9816 of the light along the slit.
 */
export const EXTRACTION_HALF_WIDTH_PER_FWHM = 1.0;

export interface SpectrumOptions {
  /** Zenith seeing FWHM, arcsec; default the site's typicalSeeingArcsec. */
  seeingArcsec?: number;
  /** V-band extinction, mag per airmass; default that of the imager's filter named "V". */
  extinctionMagPerAirmass?: number;
}

/** The spectrum inputs for one slit, with the geometry that produced them. */
export interface SpectrumSetup {
  slitArcsec: number;
  fwhmArcsec: number;
  slitFraction: number;
  /** Fraction of the light inside the extraction window along the slit. */
  extractionFraction: number;
  resolutionElementPixels: number;
  resolutionNm: number;
  /** lambda / delta-lambda at the reference wavelength. */
  resolvingPower: number;
  /** Source electrons per second per resolution element for a V = 0 object above the atmosphere (before slit losses). */
  v0EPerSPerResolutionElement: number;
  extinctionMagPerAirmass: number;
  signal: CcdSignal;
}

/**
 * V extinction for the spectrum, mag per airmass: the option, else the site's
 * V value as the sky module defines it (the imager's V filter, or its marked
 * fallback constant when the site has none).
 */
export function spectrumExtinction(site: Site, options: SpectrumOptions): number {
  if (options.extinctionMagPerAirmass !== undefined) {
    requireNonNegative('extinctionMagPerAirmass', options.extinctionMagPerAirmass);
    return options.extinctionMagPerAirmass;
  }
  return siteVExtinctionMagPerAirmass(site);
}

/** The spectrograph of a site; throws PlanConfigError when it has none. */
export function requireSpectrograph(site: Site): Spectrograph {
  if (site.spectrograph === undefined) throw new PlanConfigError(`site "${site.id}" has no spectrograph configured`);
  return site.spectrograph;
}

/**
 * CCD-equation inputs per resolution element at the reference wavelength.
 * Source: V = 0 photon flux (Bessell et al. 1998 zero point over h c / lambda)
 * x clear area x throughput x 10^(-0.4 (V + k X)) x slit transmission x
 * extraction fraction x resolution element (nm). Resolution element: the
 * configured pixels for the narrowest slit, scaled by the width of the light in
 * the slit, min(slit, FWHM), over the narrowest slit (no smaller than configured).
 * Sky: the V surface brightness over slit width x spatial pixel x dispersion per
 * pixel. Noise pixels: resolution element x extraction window (2 FWHM) along the
 * slit; background from the rest of the slit, less 2 FWHM either side.
 */
export function spectrumSetup(site: Site, slitArcsec: number, conditions: ObservingConditions, options: SpectrumOptions = {}): SpectrumSetup {
  checkConditions(conditions);
  const sp = requireSpectrograph(site);
  requirePositive('slitArcsec', slitArcsec);
  if (!sp.slitWidthsArcsec.includes(slitArcsec)) {
    throw new PhotometryInputError('slitArcsec', slitArcsec, `is not a slit of this spectrograph; configured: ${sp.slitWidthsArcsec.join(', ')} arcsec`);
  }
  const zenithSeeing = options.seeingArcsec ?? site.typicalSeeingArcsec;
  requirePositive('seeingArcsec', zenithSeeing);
  const fwhmArcsec = seeingAtAirmass(zenithSeeing, conditions.airmass);
  const narrowest = Math.min(...sp.slitWidthsArcsec);
  const resolutionElementPixels = sp.resolutionElementPixels * Math.max(1, Math.min(slitArcsec, fwhmArcsec) / narrowest);
  const resolutionNm = resolutionElementPixels * sp.dispersionNmPerPixel;
  const photonFlux = v0PhotonFluxPerCm2PerNm(sp.referenceWavelengthNm);
  const areaCm2 = collectingAreaCm2(site.telescope.apertureM, site.telescope.obstructionFraction);
  const v0EPerSPerNm = photonFlux * areaCm2 * sp.throughput;
  const extinction = spectrumExtinction(site, options);
  const slitFraction = slitTransmission(slitArcsec, fwhmArcsec);
  const extractionHalfWidth = EXTRACTION_HALF_WIDTH_PER_FWHM * fwhmArcsec;
  const extractionFraction = erf((extractionHalfWidth * 2 * Math.sqrt(Math.LN2)) / fwhmArcsec);
  const spatialPixels = (2 * extractionHalfWidth) / sp.pixelScaleArcsec;
  const aperturePixels = resolutionElementPixels * spatialPixels;
  const skyLengthArcsec = Math.max(sp.slitLengthArcsec - 4 * fwhmArcsec, 2 * extractionHalfWidth);
  const backgroundPixels = resolutionElementPixels * (skyLengthArcsec / sp.pixelScaleArcsec);
  const sourceEPerS = v0EPerSPerNm * Math.pow(10, -0.4 * (conditions.vMag + extinction * conditions.airmass)) * slitFraction * extractionFraction * resolutionNm;
  const skyEPerPixelPerS = v0EPerSPerNm * Math.pow(10, -0.4 * conditions.skyVMagPerArcsec2) * slitArcsec * sp.pixelScaleArcsec * sp.dispersionNmPerPixel;
  return {
    slitArcsec,
    fwhmArcsec,
    slitFraction,
    extractionFraction,
    resolutionElementPixels,
    resolutionNm,
    resolvingPower: sp.referenceWavelengthNm / resolutionNm,
    v0EPerSPerResolutionElement: v0EPerSPerNm * resolutionNm,
    extinctionMagPerAirmass: extinction,
    signal: {
      sourceEPerS,
      skyEPerPixelPerS,
      darkEPerPixelPerS: sp.darkEPerPixelPerS,
      readNoiseE: sp.readNoiseE,
      gainEPerAdu: sp.gainEPerAdu,
      aperturePixels,
      backgroundPixels,
    },
  };
}

const fmt = (x: number, digits = 3): string => Number(x.toPrecision(digits)).toString();

/**
 * Caps on one spectrum exposure, shortest first: drift out of the slit (the
 * rate uncertainty times t stays below a quarter of the slit width, t <= w /
 * (4 sigma_rate); common practice) and the spectrograph's maximum single exposure.
 */
export function spectrumLimits(site: Site, slitArcsec: number, conditions: ObservingConditions): ExposureLimit[] {
  const sp = requireSpectrograph(site);
  const limits: ExposureLimit[] = [];
  if (conditions.rateSigmaArcsecPerS > 0) {
    limits.push({
      kind: 'drift out of slit',
      maxExposureS: slitArcsec / (4 * conditions.rateSigmaArcsecPerS),
      detail: `rate uncertainty ${fmt(conditions.rateSigmaArcsecPerS)} arcsec/s x t must stay below slit/4 = ${fmt(slitArcsec / 4)} arcsec`,
    });
  }
  limits.push({
    kind: 'maximum exposure',
    maxExposureS: sp.maxExposureS,
    detail: `spectrograph maximum single exposure ${fmt(sp.maxExposureS)} s`,
  });
  return limits.sort((a, b) => a.maxExposureS - b.maxExposureS);
}

/**
 * Time, s, for the tracking error to carry a centred object to the slit edge,
 * (w/2) / sigma_rate: how often it must be re-centred. Infinity for a perfectly known rate.
 */
export function slitResidenceS(slitArcsec: number, rateSigmaArcsecPerS: number): number {
  requirePositive('slitArcsec', slitArcsec);
  requireNonNegative('rateSigmaArcsecPerS', rateSigmaArcsecPerS);
  return rateSigmaArcsecPerS > 0 ? slitArcsec / 2 / rateSigmaArcsecPerS : Number.POSITIVE_INFINITY;
}

/**
 * Limiting V magnitude for a spectrum: the V that reaches `targetSnr` per
 * resolution element in `count` exposures of `exposureS`, at this airmass and sky
 * (CCD equation solved for the source rate, then the photon zero point inverted).
 */
export function spectrumLimitingMagnitude(setup: SpectrumSetup, airmass: number, targetSnr: number, exposureS: number, count = 1): number {
  requireFinite('airmass', airmass);
  const needed = sourceRateForSnr(setup.signal, targetSnr, exposureS, count);
  const perV0 = setup.v0EPerSPerResolutionElement * setup.slitFraction * setup.extractionFraction;
  return -2.5 * Math.log10(needed / perV0) - setup.extinctionMagPerAirmass * airmass;
}
