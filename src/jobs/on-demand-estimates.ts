import type { GeodeticLocation } from '../config/schema.js';
import type { EphemerisRow } from '../orbit/ephemeris.js';
import type { RangePriorChoice } from '../planning/assess.js';
import type { Store } from '../store/index.js';
import { StoredDataError } from '../store/objects.js';
import { assessInputFor, type AssessInput } from './assessment-runner.js';
import type { EstimateAnswer, EstimateTask } from './estimate-worker.js';
import { createTaskPool, type TaskPool } from './task-pool.js';
import type { TaskFailure } from './worker-task.js';

/** An on-demand estimate that gave no answer, with why (a typed failure from its worker pool). */
export class OnDemandFailure extends Error {
  override readonly name = 'OnDemandFailure';
  constructor(readonly failure: TaskFailure) {
    super(failure.message);
  }
}

/** Seconds a caller is told to wait when the estimate worker cannot start. */
const UNAVAILABLE_RETRY_S = 30;

/**
 * How the API should answer an on-demand failure: `refused` (the object cannot
 * be estimated: refused data, over the time limit, or a worker stopped by it),
 * `busy` (ask again later), or null for a fault of the service.
 */
export function classifyOnDemandFailure(err: unknown): { kind: 'refused'; message: string } | { kind: 'busy'; message: string; retryAfterS: number } | null {
  if (!(err instanceof OnDemandFailure)) return null;
  const f = err.failure;
  switch (f.kind) {
    case 'refused':
    case 'timeout':
    case 'crashed':
      return { kind: 'refused', message: f.message };
    case 'busy':
      return { kind: 'busy', message: f.message, retryAfterS: f.retryAfterS };
    case 'unavailable':
      return { kind: 'busy', message: f.message, retryAfterS: UNAVAILABLE_RETRY_S };
    case 'error':
      return null;
  }
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
 * worker keeps the estimates it computed while the data are unchanged. Each
 * estimate runs under `timeLimitMs`; a question waits at most `waitMs` for the
 * worker, else it is answered busy. A timeout or a crash is recorded on the
 * object, and the same data are then refused at once. Failures reject with
 * OnDemandFailure.
 */
export interface WorkerEstimates {
  ephemeris(objectId: string, location: GeodeticLocation, timesUtc: readonly Date[]): Promise<{ method: string; rows: EphemerisRow[] } | null>;
  skyView(objectId: string, location: GeodeticLocation, timeUtc: Date, maxMembers: number): Promise<{ row: EphemerisRow | null; members: { raDeg: number; decDeg: number }[] | null } | null>;
  /** Why the worker cannot start, while it cannot (for /readyz). */
  problem(): string | null;
  close(graceMs?: number): Promise<void>;
}

export function createOnDemandEstimates(deps: {
  store: Store;
  members: number;
  clock: () => Date;
  rangePrior?: RangePriorChoice;
  timeLimitMs: number;
  waitMs: number;
  heapMb: number;
  /** Another worker entry (tests). */
  workerScript?: URL;
}): WorkerEstimates {
  let pool: TaskPool<EstimateTask, EstimateAnswer> | null = null;
  let closed = false;
  const ask = async (objectId: string, question: EstimateTask['ask']): Promise<EstimateAnswer | null> => {
    const object = deps.store.objects.getObject(objectId);
    if (!object) return null;
    let input: AssessInput;
    try {
      input = assessInputFor(deps.store, objectId, deps.clock());
    } catch (err) {
      if (err instanceof StoredDataError) throw new OnDemandFailure({ kind: 'refused', message: err.message });
      throw err;
    }
    if (input.observations.length === 0 && !input.orbit) return null;
    const dataKey = deps.store.objects.dataKey(objectId);
    if (object.failure && (object.failure.kind === 'timeout' || object.failure.kind === 'crashed') && object.failure.dataKey === dataKey) {
      throw new OnDemandFailure({ kind: 'refused', message: `not estimated again from the same data: ${object.failure.message} (${object.failure.stage}, ${object.failure.at})` });
    }
    if (closed) throw new OnDemandFailure({ kind: 'unavailable', message: 'the on-demand estimate worker is stopping' });
    pool ??= createTaskPool<EstimateTask, EstimateAnswer>({
      name: 'on-demand estimate',
      script: deps.workerScript ?? estimateWorkerUrl(),
      threads: 1,
      taskTimeoutMs: deps.timeLimitMs,
      waitMs: deps.waitMs,
      heapMb: deps.heapMb,
    });
    const result = await pool.run({ input, dataKey, members: deps.members, rangePrior: deps.rangePrior ?? 'auto', ask: question });
    if (result.ok) return result.value;
    const f = result.failure;
    if (f.kind === 'timeout' || f.kind === 'crashed') {
      deps.store.objects.recordFailure(objectId, { kind: f.kind, stage: 'estimate', message: f.message, at: deps.clock().toISOString(), dataKey });
    }
    throw new OnDemandFailure(f);
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
    problem() {
      const failure = pool?.health().startFailure ?? null;
      return failure ? `the on-demand estimate worker cannot start: ${failure}` : null;
    },
    async close(graceMs = 0) {
      closed = true;
      await pool?.close(graceMs);
      pool = null;
    },
  };
}
