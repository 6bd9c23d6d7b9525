import type { Site } from '../../src/config/schema.js';
import { collectingAreaCm2, v0PhotonFluxPerCm2PerNm } from '../../src/photometry/spectroscopy.js';

/**
 * Test telescopes for the trade's check values. Zero points are derived, not
 * looked up: V = 0 photon flux at 550 nm (Bessell et al. 1998) x the V band's
 * equivalent width of about 88 nm (Bessell 1990, PASP 102, 1181; from memory) x
 * clear area x end-to-end efficiency (optics x filter x detector; values typical
 * of such systems, a planning assumption).
 */
export function zeroPointMag(apertureM: number, obstructionFraction: number, efficiency: number): number {
  const ePerSForV0 = v0PhotonFluxPerCm2PerNm(550) * 88 * collectingAreaCm2(apertureM, obstructionFraction) * efficiency;
  return 2.5 * Math.log10(ePerSForV0);
}

interface TelescopeSpec {
  id: string;
  apertureM: number;
  obstructionFraction: number;
  efficiency: number;
  pixelScaleArcsec: number;
  seeingArcsec: number;
  readNoiseE: number;
  darkSkyV: number;
  spectrographThroughput?: number;
}

/** A site around one telescope, V filter only (extinction 0.15 mag/airmass, a good site; common practice). */
export function testSite(spec: TelescopeSpec): Site {
  const site: Site = {
    id: spec.id,
    name: `test telescope ${spec.id}`,
    location: { latDeg: 30, lonDeg: -100, heightM: 2000 },
    mount: 'equatorial',
    limits: {
      nightSunAltitudeDeg: -12,
      minAltitudeDeg: 20,
      hourAngleH: { min: -6, max: 6 },
      decDeg: { min: -40, max: 89 },
      maxRateArcsecPerS: 100,
      zenithKeepOutDeg: 0,
      sunAvoidanceDeg: 45,
      minMoonSeparationDeg: 20,
      moonSeparationScalesWithIllumination: false,
    },
    telescope: { apertureM: spec.apertureM, obstructionFraction: spec.obstructionFraction },
    imager: {
      pixelScaleArcsec: spec.pixelScaleArcsec,
      fieldArcmin: { width: 60, height: 60 },
      readNoiseE: spec.readNoiseE,
      gainEPerAdu: 1.5,
      darkEPerPixelPerS: 0.002,
      fullWellE: 100_000,
      readoutS: 10,
      maxExposureS: 600,
      filters: [
        {
          name: 'V',
          zeroPointMag: zeroPointMag(spec.apertureM, spec.obstructionFraction, spec.efficiency),
          extinctionMagPerAirmass: 0.15,
          darkSkyMagPerArcsec2: spec.darkSkyV,
        },
      ],
    },
    typicalSeeingArcsec: spec.seeingArcsec,
    darkSkyVMagPerArcsec2: spec.darkSkyV,
  };
  if (spec.spectrographThroughput !== undefined) {
    site.spectrograph = {
      slitWidthsArcsec: [1.0, 1.5, 2.0, 3.0],
      slitLengthArcsec: 120,
      acquisitionFieldArcsec: 180,
      wavelengthRangeNm: { min: 400, max: 950 },
      referenceWavelengthNm: 550,
      dispersionNmPerPixel: 0.5,
      resolutionElementPixels: 3,
      pixelScaleArcsec: 0.4,
      throughput: spec.spectrographThroughput,
      readNoiseE: 4,
      gainEPerAdu: 1.2,
      darkEPerPixelPerS: 0.001,
      readoutS: 20,
      maxExposureS: 1800,
      acquisitionS: 300,
    };
  }
  return site;
}

/** A 0.5-m wide-field survey telescope: fast optics with a large central obstruction, coarse pixels. */
export const SURVEY_0M5 = testSite({
  id: 'survey-0m5',
  apertureM: 0.5,
  obstructionFraction: 0.45,
  efficiency: 0.45,
  pixelScaleArcsec: 1.5,
  seeingArcsec: 2.0,
  readNoiseE: 10,
  darkSkyV: 21.5,
});

/** A 1-m follow-up telescope with an imager and a low-resolution slit spectrograph (throughput 0.15). */
export const FOLLOWUP_1M = testSite({
  id: 'followup-1m',
  apertureM: 1.0,
  obstructionFraction: 0.35,
  efficiency: 0.45,
  pixelScaleArcsec: 0.4,
  seeingArcsec: 1.2,
  readNoiseE: 7,
  darkSkyV: 21.8,
  spectrographThroughput: 0.15,
});

/** A 1.5-m follow-up telescope. */
export const FOLLOWUP_1M5 = testSite({
  id: 'followup-1m5',
  apertureM: 1.5,
  obstructionFraction: 0.3,
  efficiency: 0.45,
  pixelScaleArcsec: 0.4,
  seeingArcsec: 1.2,
  readNoiseE: 7,
  darkSkyV: 21.8,
  spectrographThroughput: 0.15,
});
