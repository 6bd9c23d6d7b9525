import { OrbitConvergenceError, OrbitInputError } from '../orbit/errors.js';
import { EstimationFailedError, EstimationInputError } from '../orbit/estimation/errors.js';
import { PhotometryInputError } from '../photometry/errors.js';
import { SkyInputError } from '../sky/errors.js';
import { PlanningInputError } from './errors.js';

/**
 * True when `err` is one of the typed errors by which the numeric floors
 * (sky, orbit, photometry, planning) refuse their input or give up on it: the
 * data cannot be assessed, which is not a fault of the service.
 */
export function isNumericRefusal(err: unknown): boolean {
  return (
    err instanceof EstimationInputError ||
    err instanceof EstimationFailedError ||
    err instanceof OrbitInputError ||
    err instanceof OrbitConvergenceError ||
    err instanceof PhotometryInputError ||
    err instanceof SkyInputError ||
    err instanceof PlanningInputError
  );
}
