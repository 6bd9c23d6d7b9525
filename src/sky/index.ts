/**
 * The sky and site model: pure functions of (site, time, target) on top of astronomy-engine.
 * Degrees and hours at the edges, ISO-8601 UTC strings only where data leave the process
 * (nightToJson); Date objects inside.
 */
export { SkyInputError } from './errors.js';
export {
  type Horizontal,
  type RefractionOption,
  type SiteFrame,
  type ExactSiteFrame,
  type ApparentTarget,
  type Vec3,
  observerFromLocation,
  astroTimeFromUtc,
  siteFrameAt,
  apparentInFrame,
  apparentFromEqd,
  horizontalFromIcrs,
  horizontalFromOfDate,
  greenwichApparentSiderealTimeH,
  greenwichMeanSiderealTimeH,
  localSiderealTimeH,
  hourAngleH,
  parallacticAngleDeg,
  parallacticAngleFromHourAngleDeg,
  airmassKastenYoung,
  altitudeForAirmassDeg,
  angularSeparationDeg,
  unitVectorFromRaDec,
  raDecFromVector,
  wrapHours12,
} from './site.js';
export { type SunInFrame, type MoonInFrame, moonAndSunInFrame } from './bodies.js';
export {
  type SkyBrightnessInput,
  type SkyBrightness,
  type SkyBrightnessAt,
  FALLBACK_V_EXTINCTION_MAG_PER_AIRMASS,
  skyBrightnessKS,
  skyBrightnessAt,
  skyBrightnessInSky,
  siteVExtinctionMagPerAirmass,
  nanolambertsFromVMag,
  vMagFromNanolamberts,
  airmassKS,
} from './sky-brightness.js';
export { type Night, type MoonNight, type TimeInterval, NIGHT_RULE, nightAt, nightToJson, localMeanNoonUtc } from './night.js';
export {
  type LimitName,
  type LimitCheck,
  type LimitReport,
  type MarginUnit,
  type TargetState,
  type PreparedLimits,
  LIMIT_ORDER,
  evaluateLimits,
  evaluateLimitsInSky,
  prepareLimits,
  horizonMaskAltitudeDeg,
  requiredMoonSeparationDeg,
} from './limits.js';
export { type SkyAt, type SkyTimeline, buildSkyTimeline, skyAt, skyFromTimeline } from './timeline.js';
export {
  type TargetAt,
  type WindowOptions,
  type WindowEdge,
  type ObservableWindow,
  type WindowsResult,
  observableWindows,
} from './windows.js';
