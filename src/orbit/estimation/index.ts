/**
 * Short-arc orbit estimation: attributable, systematic ranging, virtual
 * orbits, the assessment summary and ephemerides with uncertainty.
 */
export { estimateObject, estimateFromCore, advanceCore, orbitClass, DEFAULT_MEMBERS, ESTIMATOR_VERSION, CLOSE_APPROACH_AU, CLOSE_APPROACH_WINDOW_DAYS, LUNAR_DISTANCE_KM, ALBEDO_RANGE, ORBIT_BLOCK_DEFAULT_SIGMA } from './estimate.js';
export type { CoreEstimate, EnsembleCore, EstimateInput, EstimatedEphemerisRow, MagnitudeBudget, ShortArcEstimate } from './estimate.js';
export { fitAttributable, extrapolateAttributable, OUTLIER_CHI2_2DOF, type Attributable } from './attributable.js';
export { systematicRanging, MIXTURE_ENCOUNTER_LOG_WEIGHT, ENCOUNTER_MISS_AU, ENCOUNTER_SPEED_KM_S, ENCOUNTER_WINDOW_DAYS, RANGE_MIN_AU, RANGE_MAX_AU, DEFAULT_RANGE_PRIOR, DEFAULT_RANGE_PRIOR_EXPONENT, type RangePriorKind, type RangingOptions, type RangingResult, type VirtualOrbit } from './ranging.js';
export {
  populationLogPrior,
  populationDensity,
  phaseSpaceDensity,
  elementDensity,
  semiMajorAxisEccentricityDensity,
  inclinationDensity,
  delaunayJacobian,
  priorElementsFromState,
  meanTrackletV,
  POPULATION_WEIGHTS,
  POPULATION_H_SLOPES,
  POPULATION_H_REFERENCE,
  DEFAULT_TRACKLET_V,
  type PopulationComponentName,
  type PriorElements,
} from './population-prior.js';
export { prepareObservations, type PreparedObservation } from './observations.js';
export { skySpread, ellipseDistanceSquared, offsetArcsec, GAUSSIAN_3SIGMA_CONTENT_2D, type SkySpread } from './sky-spread.js';
export { createRandom, type RandomSource } from './random.js';
export { EstimationInputError, EstimationFailedError } from './errors.js';
export { packCore, unpackCore, storedCoreBytes, coreFromStoredBytes, STORED_CORE_VERSION, type PackedCore } from './core-pack.js';
