import { createHash } from 'node:crypto';
import type { GeodeticLocation } from '../config/schema.js';
import type { EphemerisRow } from './ephemeris.js';

/**
 * The contract between orbit estimation and planning: what the service knows
 * about one object after fitting its tracklet (or taking its orbit block).
 * Everything here is an estimate with its spread, never an impact prediction.
 */

export interface Percentiles {
  p5: number;
  p50: number;
  p95: number;
}

export interface ResidualRow {
  t: string;
  /** Observed minus computed, RA times cos Dec, arcsec. */
  dRaArcsec: number;
  dDecArcsec: number;
  outlier: boolean;
}

export interface EstimateSummary {
  /** 'orbit-block' when the notice carried elements; 'ranging' for a tracklet-only estimate. */
  method: 'orbit-block' | 'ranging';
  members: number;
  /** Topocentric range at the tracklet's mean epoch, au. */
  rangeAu: Percentiles;
  /** Fractions of the virtual orbits by class (sum 1): neo = near-Earth, q < 1.3 au (the service writes it as nearEarth / nearEarthFraction); main-belt-like; other. */
  classFractions: { neo: number; mainBelt: number; other: number };
  /** Absolute magnitude H (V band) across the ensemble; null when the tracklet has no magnitudes and no H was given. */
  hMag: Percentiles | null;
  /** Diameter range, m, for geometric albedo 0.25 (small end) to 0.05 (large end) at the median H. */
  diameterM: { min: number; max: number } | null;
  /** Minimum geocentric distance over the next `withinDays` days. */
  minGeocentricDistance: { withinDays: number; au: Percentiles; lunarDistances: Percentiles };
  /** True when the median minimum distance is inside 0.05 au (about 20 lunar distances): a close approach, not a hazard statement. */
  closeApproach: boolean;
  residuals: ResidualRow[];
  rmsArcsec: number | null;
  notes: string[];
}

/** How an ephemeris may save work where the caller can accept it. */
export interface EphemerisOptions {
  /**
   * The ensemble's statistics (`unc`, `magSigma`) at every `spreadEvery`-th
   * requested time and the last; rows in between take them by linear
   * interpolation in time (the nominal position is computed at every time).
   * Default 1: the ensemble at every time.
   */
  spreadEvery?: number;
}

/** An object's estimate: its summary and an ephemeris (nominal with uncertainty) for any viewpoint and times. */
export interface ObjectEstimate {
  objectId: string;
  /** ISO UTC of the first observation (discovery), for freshness. */
  firstObservedAt: string;
  summary: EstimateSummary;
  /** Nominal rows with `unc` (1-sigma ellipse, arcsec) and `magSigma` from the ensemble. */
  ephemeris(location: GeodeticLocation, timesUtc: readonly Date[], options?: EphemerisOptions): EphemerisRow[];
  /** The same for several sites at once (one row list per location, same order), when the estimate can share the work. */
  ephemerisForSites?(locations: readonly GeodeticLocation[], timesUtc: readonly Date[], options?: EphemerisOptions): EphemerisRow[][];
  /**
   * Where each virtual orbit is seen from `location` at `timeUtc` (astrometric ICRS, degrees),
   * for pictures of the uncertainty region; at most `maxMembers` of them. Absent when the
   * estimate has no ensemble.
   */
  memberPositions?(location: GeodeticLocation, timeUtc: Date, maxMembers?: number): { raDeg: number; decDeg: number }[];
}

/** A stable 31-bit ensemble seed from the object id (SHA-256), so replans of the same data give the same virtual orbits. */
export function seedForObject(objectId: string): number {
  return createHash('sha256').update(objectId).digest().readUInt32BE(0) & 0x7fffffff;
}
