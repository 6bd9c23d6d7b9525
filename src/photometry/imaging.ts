import type { Filter, Imager, Site } from '../config/schema.js';
import {
  APERTURE_RADIUS_PER_FWHM,
  electronRate,
  gaussianEnclosedFraction,
  peakPixelFraction,
  seeingAtAirmass,
  skyRatePerPixel,
  sourceRateForSnr,
  type CcdSignal,
} from './ccd.js';
import { checkConditions, PlanConfigError, type ExposureLimit, type ObservingConditions } from './conditions.js';
import { requireInRange, requirePositive } from './errors.js';
import { bandOffsetFromV, DEFAULT_BAND_OFFSETS, type BandOffsets } from './magnitudes.js';

/**
 * Imaging: the CCD-equation inputs for one filter on a site's imager, the caps
 * on a single exposure, and the limiting magnitude.
 */

/** How the mount follows the target during an exposure. */
export type Tracking = 'non-sidereal' | 'sidereal';

export interface ImagingOptions {
  /** Zenith seeing FWHM, arcsec; default the site's typicalSeeingArcsec. */
  seeingArcsec?: number;
  /** Mean asteroid colours, m_band - V; default DEFAULT_BAND_OFFSETS. */
  bandOffsets?: BandOffsets;
  /** Default non-sidereal (the requests carry the rates). */
  tracking?: Tracking;
  /** Fraction of full well the brightest pixel may reach; default 0.8 (linearity margin, common practice). */
  saturationFraction?: number;
  /** Background annulus area per aperture area; default 5 (annulus from 2 to 3 FWHM, common practice). */
  backgroundAreaRatio?: number;
}

/** The imaging inputs worked out for one filter, with the geometry that produced them. */
export interface ImagingSetup {
  filter: Filter;
  bandMag: number;
  fwhmArcsec: number;
  apertureRadiusArcsec: number;
  apertureFraction: number;
  skyBandMagPerArcsec2: number;
  signal: CcdSignal;
  /** Source electrons per second in the brightest pixel (centred image). */
  peakSourceEPerS: number;
}

/** The filter of this name on the imager; throws PlanConfigError listing the configured ones. */
export function findFilter(imager: Imager, name: string): Filter {
  const filter = imager.filters.find((f) => f.name === name);
  if (filter === undefined) {
    throw new PlanConfigError(`filter "${name}" is not on this imager; configured: ${imager.filters.map((f) => f.name).join(', ')}`);
  }
  return filter;
}

/**
 * Sky in a band from the V sky at the target: mu_band = mu_V + (dark mu_band -
 * dark mu_V), keeping the dark-sky colour of the site (moonlight is bluer than
 * that, so red bands come out slightly too bright a sky and blue ones too dark;
 * a planning approximation).
 */
export function skyInBand(site: Site, filter: Filter, skyVMagPerArcsec2: number): number {
  const darkBand = filter.darkSkyMagPerArcsec2 ?? site.darkSkyVMagPerArcsec2;
  return skyVMagPerArcsec2 + (darkBand - site.darkSkyVMagPerArcsec2);
}

/**
 * CCD-equation inputs for one filter: source electrons from the filter's zero
 * point (1 e-/s above the atmosphere), the object's band magnitude (V plus its
 * mean colour) and the extinction at the airmass; an aperture of radius
 * APERTURE_RADIUS_PER_FWHM x FWHM, with the seeing scaled to the airmass
 * (FWHM x X^0.6); sky from the band's surface brightness over that aperture;
 * background from an annulus `backgroundAreaRatio` times the aperture area.
 * Trailing within the aperture is neglected (the caps keep it below one FWHM).
 */
export function imagingSetup(site: Site, filterName: string, conditions: ObservingConditions, options: ImagingOptions = {}): ImagingSetup {
  checkConditions(conditions);
  const imager = site.imager;
  const filter = findFilter(imager, filterName);
  // The configured colour of the filter, else the table (or the caller's table).
  const colour = options.bandOffsets === undefined ? filter.asteroidColourFromVMag : undefined;
  const bandMag = conditions.vMag + (colour ?? bandOffsetFromV(filter.name, options.bandOffsets ?? DEFAULT_BAND_OFFSETS));
  const zenithSeeing = options.seeingArcsec ?? site.typicalSeeingArcsec;
  requirePositive('seeingArcsec', zenithSeeing);
  const fwhmArcsec = seeingAtAirmass(zenithSeeing, conditions.airmass);
  const apertureRadiusArcsec = APERTURE_RADIUS_PER_FWHM * fwhmArcsec;
  const apertureFraction = gaussianEnclosedFraction(apertureRadiusArcsec, fwhmArcsec);
  const totalSourceEPerS = electronRate(bandMag, filter.zeroPointMag, filter.extinctionMagPerAirmass, conditions.airmass);
  const skyBandMagPerArcsec2 = skyInBand(site, filter, conditions.skyVMagPerArcsec2);
  const aperturePixels = (Math.PI * apertureRadiusArcsec ** 2) / imager.pixelScaleArcsec ** 2;
  const ratio = options.backgroundAreaRatio ?? 5;
  requirePositive('backgroundAreaRatio', ratio);
  return {
    filter,
    bandMag,
    fwhmArcsec,
    apertureRadiusArcsec,
    apertureFraction,
    skyBandMagPerArcsec2,
    signal: {
      sourceEPerS: totalSourceEPerS * apertureFraction,
      skyEPerPixelPerS: skyRatePerPixel(skyBandMagPerArcsec2, filter.zeroPointMag, imager.pixelScaleArcsec),
      darkEPerPixelPerS: imager.darkEPerPixelPerS,
      readNoiseE: imager.readNoiseE,
      gainEPerAdu: imager.gainEPerAdu,
      aperturePixels,
      backgroundPixels: ratio * aperturePixels,
    },
    peakSourceEPerS: totalSourceEPerS * peakPixelFraction(fwhmArcsec, imager.pixelScaleArcsec),
  };
}

const fmt = (x: number, digits = 3): string => Number(x.toPrecision(digits)).toString();

/**
 * Caps on one imaging exposure, shortest first:
 * - non-sidereal tracking: the rate uncertainty must not smear the image by more
 *   than FWHM/2, t <= FWHM / (2 sigma_rate);
 * - sidereal tracking: the trail must stay below one FWHM, t <= FWHM / rate;
 * - saturation: the brightest pixel (centred Gaussian, plus sky and dark) stays
 *   below saturationFraction x full well;
 * - the imager's maximum single exposure.
 * These are the trade's rules (common practice), not published results.
 */
export function imagingLimits(site: Site, setup: ImagingSetup, conditions: ObservingConditions, options: ImagingOptions = {}): ExposureLimit[] {
  const limits: ExposureLimit[] = [];
  const tracking = options.tracking ?? 'non-sidereal';
  if (tracking === 'non-sidereal') {
    if (conditions.rateSigmaArcsecPerS > 0) {
      limits.push({
        kind: 'tracking smear',
        maxExposureS: setup.fwhmArcsec / (2 * conditions.rateSigmaArcsecPerS),
        detail: `rate uncertainty ${fmt(conditions.rateSigmaArcsecPerS)} arcsec/s x t must stay below FWHM/2 = ${fmt(setup.fwhmArcsec / 2)} arcsec`,
      });
    }
  } else if (conditions.rateArcsecPerS > 0) {
    limits.push({
      kind: 'trailing',
      maxExposureS: setup.fwhmArcsec / conditions.rateArcsecPerS,
      detail: `rate ${fmt(conditions.rateArcsecPerS)} arcsec/s x t must stay below FWHM = ${fmt(setup.fwhmArcsec)} arcsec (sidereal tracking)`,
    });
  }
  const fraction = options.saturationFraction ?? site.exposure?.saturationFraction ?? 0.8;
  requireInRange('saturationFraction', fraction, 0.05, 1);
  const capacityE = fraction * site.imager.fullWellE;
  const peakRate = setup.peakSourceEPerS + setup.signal.skyEPerPixelPerS + setup.signal.darkEPerPixelPerS;
  limits.push({
    kind: 'saturation',
    maxExposureS: capacityE / peakRate,
    detail: `brightest pixel gains ${fmt(peakRate)} e-/s and must stay below ${fmt(fraction * 100)}% of full well = ${fmt(capacityE)} e-`,
  });
  limits.push({
    kind: 'maximum exposure',
    maxExposureS: site.imager.maxExposureS,
    detail: `imager maximum single exposure ${fmt(site.imager.maxExposureS)} s`,
  });
  return limits.sort((a, b) => a.maxExposureS - b.maxExposureS);
}

/**
 * Limiting magnitude in the filter's band: the magnitude reaching `targetSnr`
 * in `count` exposures of `exposureS` each, by the CCD equation solved for the
 * source rate (sourceRateForSnr), converted with the zero point, extinction and
 * aperture loss of `setup`. Returns the band magnitude.
 */
export function imagingLimitingMagnitude(setup: ImagingSetup, airmass: number, targetSnr: number, exposureS: number, count = 1): number {
  const rateInAperture = sourceRateForSnr(setup.signal, targetSnr, exposureS, count);
  const rateAboveAtmosphere = rateInAperture / setup.apertureFraction;
  return setup.filter.zeroPointMag - 2.5 * Math.log10(rateAboveAtmosphere) - setup.filter.extinctionMagPerAirmass * airmass;
}
