/**
 * The photometry capability: magnitudes, the CCD equation, imaging and
 * slit-spectrum setups, light-curve cadence and exposure plans per request kind.
 * The planner's entry point is planExposure.
 */
export * from './errors.js';
export * from './magnitudes.js';
export * from './ccd.js';
export * from './conditions.js';
export * from './imaging.js';
export * from './spectroscopy.js';
export * from './cadence.js';
export * from './plans.js';
