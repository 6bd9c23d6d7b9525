import type { Config } from '../config/schema.js';
import type { Intake } from '../intake/ingest.js';
import type { OnDemandEstimates } from './on-demand.js';
import type { Store } from '../store/index.js';
import type { ServiceMetrics } from '../telemetry/metrics.js';

/** What every route may use. */
export interface ApiContext {
  config: Config;
  store: Store;
  intake: Intake;
  clock: () => Date;
  metrics: ServiceMetrics;
  migrationsDir: string;
  sourceNames: string[];
  /**
   * Ephemerides and sky views of a stored object from an estimate computed on
   * demand from its tracklet (and orbit block); in the service, off the API
   * thread. Refusals reject with EstimateRefusedError.
   */
  onDemand: OnDemandEstimates;
  /** Says that objects were put on the work queue, so assessment can start without waiting for its next tick. */
  workQueued: () => void;
  /** Faults outside the API that /readyz names among its problems (e.g. a worker that cannot start). */
  problems?: () => string[];
}
