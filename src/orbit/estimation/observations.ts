import type { GeodeticLocation } from '../../config/schema.js';
import type {  } from '../estimate-types.js';
import type { TrackletObservation } from '../../domain/tracklet.js';
import { ARCSEC_PER_RAD, RAD_PER_DEG } from '../constants.js';
import { EstimationInputError } from './errors.js';
import { unitFromRaDec, type Vec3 } from './tangent.js';

/** One tracklet position in internal units (radians, ms since 1970 UTC), in time order. */
export interface PreparedObservation {
  /** Index in the caller's list. */
  readonly index: number;
  readonly timeUtc: Date;
  readonly timeMs: number;
  readonly raRad: number;
  readonly decRad: number;
  readonly unit: Vec3;
  readonly sigmaRad: number;
  readonly mag: number | null;
  readonly band: string | null;
  readonly observer: GeodeticLocation;
}

/** Positions closer together than this (radians, 0.2 mas) count as the same. */
const SAME_POSITION_RAD = 1e-9;

/**
 * Checks and converts a tracklet: finite numbers in range, valid ISO UTC times,
 * at least two distinct times and at least two distinct positions. Throws
 * EstimationInputError naming the first bad field. Returns the observations
 * sorted by time.
 */
export function prepareObservations(observations: readonly TrackletObservation[]): PreparedObservation[] {
  // Checked without narrowing: Array.isArray would turn the readonly list's elements into `any`.
  const isList: boolean = Array.isArray(observations);
  if (!isList || observations.length < 2) {
    throw new EstimationInputError('observations', isList ? observations.length : observations, 'a tracklet needs at least 2 observations');
  }
  const prepared = observations.map((o, index): PreparedObservation => {
    const field = `observations[${index}]`;
    const timeMs = typeof o.t === 'string' ? Date.parse(o.t) : Number.NaN;
    if (!Number.isFinite(timeMs)) throw new EstimationInputError(`${field}.t`, o.t, 'expected an ISO-8601 UTC time such as 2027-03-04T05:06:07Z');
    checkNumber(`${field}.raDeg`, o.raDeg, 0, 360);
    checkNumber(`${field}.decDeg`, o.decDeg, -90, 90);
    checkNumber(`${field}.sigmaArcsec`, o.sigmaArcsec, 0, 3600);
    if (!(o.sigmaArcsec > 0)) throw new EstimationInputError(`${field}.sigmaArcsec`, o.sigmaArcsec, 'expected a positive 1-sigma uncertainty, arcsec');
    if (o.mag !== null) checkNumber(`${field}.mag`, o.mag, -5, 35);
    const loc = o.observer;
    if (loc === null || typeof loc !== 'object') throw new EstimationInputError(`${field}.observer`, loc, 'expected a geodetic location');
    checkNumber(`${field}.observer.latDeg`, loc.latDeg, -90, 90);
    checkNumber(`${field}.observer.lonDeg`, loc.lonDeg, -180, 360);
    checkNumber(`${field}.observer.heightM`, loc.heightM, -1000, 100_000);
    const raRad = o.raDeg * RAD_PER_DEG;
    const decRad = o.decDeg * RAD_PER_DEG;
    return {
      index,
      timeUtc: new Date(timeMs),
      timeMs,
      raRad,
      decRad,
      unit: unitFromRaDec(raRad, decRad),
      sigmaRad: o.sigmaArcsec / ARCSEC_PER_RAD,
      mag: o.mag,
      band: o.band,
      observer: loc,
    };
  });
  prepared.sort((a, b) => a.timeMs - b.timeMs);
  const first = prepared[0]!;
  const last = prepared[prepared.length - 1]!;
  if (last.timeMs === first.timeMs) {
    throw new EstimationInputError('observations[].t', first.timeUtc.toISOString(), 'every observation has the same time; a motion needs at least two distinct times');
  }
  const moved = prepared.some((o) => separationRad(o.unit, first.unit) > SAME_POSITION_RAD);
  if (!moved) {
    throw new EstimationInputError(
      'observations[].raDeg/decDeg',
      `${observations[0]!.raDeg}, ${observations[0]!.decDeg}`,
      'every observation has the same position, so no motion can be measured (a fixed source, or positions copied by mistake)',
    );
  }
  return prepared;
}

function checkNumber(field: string, value: number, lo: number, hi: number): void {
  if (typeof value !== 'number' || !Number.isFinite(value)) throw new EstimationInputError(field, value, 'expected a finite number');
  if (value < lo || value > hi) throw new EstimationInputError(field, value, `expected a number from ${lo} to ${hi}`);
}

export function separationRad(a: Vec3, b: Vec3): number {
  const cx = a[1] * b[2] - a[2] * b[1], cy = a[2] * b[0] - a[0] * b[2], cz = a[0] * b[1] - a[1] * b[0];
  return Math.atan2(Math.hypot(cx, cy, cz), a[0] * b[0] + a[1] * b[1] + a[2] * b[2]);
}
