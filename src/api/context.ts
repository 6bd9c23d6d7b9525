import type { Config } from '../config/schema.js';
import type { Intake } from '../intake/ingest.js';
import type { ObjectEstimate } from '../orbit/estimate-types.js';
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
   * The orbit estimate of a stored object computed on demand from its tracklet
   * (and orbit block), or null when it has too little to estimate from. Throws
   * a typed error with a message for input the estimator refuses.
   */
  estimateFor: (objectId: string) => ObjectEstimate | null;
}
