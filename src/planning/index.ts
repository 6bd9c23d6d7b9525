/**
 * The planning capability: an assessed object (ObjectEstimate) and the sites in,
 * requests with windows, sequences, rates, ephemeris tables and scores out, or
 * the reasons why not. Pure functions of their inputs and a clock.
 */
export * from './errors.js';
export * from './score.js';
export * from './search-pattern.js';
export * from './track.js';
export * from './estimate-from-elements.js';
export * from './plan-object.js';
