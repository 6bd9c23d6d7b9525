import type { GeodeticLocation } from '../config/schema.js';
import type { EphemerisRow } from '../orbit/ephemeris.js';
import type { ObjectEstimate } from '../orbit/estimate-types.js';

/**
 * What the API asks of an object's orbit estimate outside the assessments:
 * ephemeris rows for a site, and where the virtual orbits are at one instant.
 * Asynchronous, so the estimate can be computed off the API thread (the
 * service runs it in a worker thread; tests may answer from estimates in hand).
 */
export interface OnDemandEstimates {
  /** Rows for `location` at `timesUtc`, with the estimate's method; null when the object has nothing to estimate from. Rejects with EstimateRefusedError or EstimateBusyError. */
  ephemeris(objectId: string, location: GeodeticLocation, timesUtc: readonly Date[]): Promise<{ method: string; rows: EphemerisRow[] } | null>;
  /** The nominal row at `timeUtc` and at most `maxMembers` virtual-orbit positions (null when the estimate has no ensemble). */
  skyView(
    objectId: string,
    location: GeodeticLocation,
    timeUtc: Date,
    maxMembers: number,
  ): Promise<{ row: EphemerisRow | null; members: { raDeg: number; decDeg: number }[] | null } | null>;
}

/** The estimator refused the object's data, or the rows asked of it; the message says why. */
export class EstimateRefusedError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'EstimateRefusedError';
  }
}

/** No estimate can be made now (its worker is busy past a short wait, or cannot start); ask again after `retryAfterS`. */
export class EstimateBusyError extends Error {
  constructor(
    message: string,
    readonly retryAfterS: number,
  ) {
    super(message);
    this.name = 'EstimateBusyError';
  }
}

/** How another source's error should be answered: refused (422), busy (503 with retry-after), or null (a fault: 500). */
export type FailureClass = { kind: 'refused'; message: string } | { kind: 'busy'; message: string; retryAfterS: number } | null;

/** The same answers from another source (a worker thread), its errors turned into EstimateRefusedError or EstimateBusyError by `classify`. */
export function withFailures(source: OnDemandEstimates, classify: (err: unknown) => FailureClass): OnDemandEstimates {
  const mapped = async <T>(p: Promise<T>): Promise<T> => {
    try {
      return await p;
    } catch (err) {
      const c = classify(err);
      if (c?.kind === 'refused') throw new EstimateRefusedError(c.message);
      if (c?.kind === 'busy') throw new EstimateBusyError(c.message, c.retryAfterS);
      throw err;
    }
  };
  return {
    ephemeris: (objectId, location, timesUtc) => mapped(source.ephemeris(objectId, location, timesUtc)),
    skyView: (objectId, location, timeUtc, maxMembers) => mapped(source.skyView(objectId, location, timeUtc, maxMembers)),
  };
}

/** On-demand answers from a synchronous estimate source on the calling thread (tests, tools). */
export function onDemandFromEstimates(estimateFor: (objectId: string) => ObjectEstimate | null): OnDemandEstimates {
  const refusing = <T>(f: () => T): T => {
    try {
      return f();
    } catch (err) {
      throw new EstimateRefusedError(err instanceof Error ? err.message : String(err));
    }
  };
  return {
    async ephemeris(objectId, location, timesUtc) {
      return refusing(() => {
        const estimate = estimateFor(objectId);
        return estimate ? { method: estimate.summary.method, rows: estimate.ephemeris(location, timesUtc) } : null;
      });
    },
    async skyView(objectId, location, timeUtc, maxMembers) {
      return refusing(() => {
        const estimate = estimateFor(objectId);
        if (!estimate) return null;
        return {
          row: estimate.ephemeris(location, [timeUtc])[0] ?? null,
          members: estimate.memberPositions ? estimate.memberPositions(location, timeUtc, maxMembers) : null,
        };
      });
    },
  };
}
