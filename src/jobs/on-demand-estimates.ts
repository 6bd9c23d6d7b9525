import type { GeodeticLocation } from '../config/schema.js';
import type { EphemerisRow } from '../orbit/ephemeris.js';
import type { RangePriorChoice } from '../planning/assess.js';
import type { Store } from '../store/index.js';
import { assessInputFor } from './assessment-runner.js';
import type { EstimateAnswer, EstimateTask } from './estimate-worker.js';
import { createWorkerPool, WorkerTaskError, type WorkerPool } from './worker-pool.js';

/** The typed errors by which the numeric modules refuse input (their names, as they cross the thread boundary). */
const REFUSAL_NAMES = new Set(['EstimationInputError', 'EstimationFailedError', 'OrbitInputError', 'OrbitConvergenceError', 'PhotometryInputError', 'SkyInputError']);

/** True when an on-demand estimate failed because the estimator refused the data (not a fault of the service). */
export function isEstimatorRefusal(err: unknown): boolean {
  return err instanceof WorkerTaskError && REFUSAL_NAMES.has(err.remoteName);
}

/** The worker script beside this module (TypeScript under tsx and vitest, JavaScript when built). */
function estimateWorkerUrl(): URL {
  const ext = import.meta.url.endsWith('.ts') ? '.ts' : '.js';
  return new URL(`./estimate-worker${ext}`, import.meta.url);
}

/**
 * On-demand estimates in a worker thread of their own (started at the first
 * question), so an ephemeris or a sky picture never holds the API thread and
 * does not wait behind a burst of assessments. The tracklet is read here; the
 * worker keeps the estimates it computed while the data are unchanged. The
 * estimator's refusals reject with the pool's WorkerTaskError (its message says why).
 */
export interface WorkerEstimates {
  ephemeris(objectId: string, location: GeodeticLocation, timesUtc: readonly Date[]): Promise<{ method: string; rows: EphemerisRow[] } | null>;
  skyView(objectId: string, location: GeodeticLocation, timeUtc: Date, maxMembers: number): Promise<{ row: EphemerisRow | null; members: { raDeg: number; decDeg: number }[] | null } | null>;
  close(): Promise<void>;
}

export function createOnDemandEstimates(deps: { store: Store; members: number; clock: () => Date; rangePrior?: RangePriorChoice }): WorkerEstimates {
  let pool: WorkerPool<EstimateTask, EstimateAnswer> | null = null;
  const ask = async (objectId: string, question: EstimateTask['ask']): Promise<EstimateAnswer | null> => {
    const object = deps.store.objects.getObject(objectId);
    if (!object) return null;
    const input = assessInputFor(deps.store, objectId, deps.clock());
    if (input.observations.length === 0 && !input.orbit) return null;
    const dataKey = `${input.observations.length}|${input.observations.at(-1)?.t ?? ''}|${object.orbit ?? ''}`;
    pool ??= createWorkerPool<EstimateTask, EstimateAnswer>(estimateWorkerUrl(), 1);
    return pool.run({ input, dataKey, members: deps.members, rangePrior: deps.rangePrior ?? 'auto', ask: question });
  };
  return {
    async ephemeris(objectId, location, timesUtc) {
      const a = await ask(objectId, { kind: 'rows', location, timesIso: timesUtc.map((t) => t.toISOString()) });
      return a && a.kind === 'rows' ? { method: a.method, rows: a.rows } : null;
    },
    async skyView(objectId, location, timeUtc, maxMembers) {
      const a = await ask(objectId, { kind: 'sky', location, tIso: timeUtc.toISOString(), maxMembers });
      return a && a.kind === 'sky' ? { row: a.row, members: a.members } : null;
    },
    async close() {
      await pool?.close();
      pool = null;
    },
  };
}
