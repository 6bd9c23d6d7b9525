import type { Config } from '../config/schema.js';
import type { OrbitBlock } from '../domain/orbit-block.js';
import type { TrackletObservation } from '../domain/tracklet.js';
import type { Store } from '../store/index.js';
import { StoredDataError } from '../store/objects.js';
import type { KeptEstimate } from '../store/kept-estimates.js';
import type { ReplanPolicy } from '../store/work.js';
import type { NewRequest } from '../store/requests.js';
import type { ServiceMetrics } from '../telemetry/metrics.js';
import { announce } from './webhooks.js';
import type { TaskFailure, TaskResult } from './worker-task.js';

/** What an assessment needs, as plain data (it crosses into a worker thread). */
export interface AssessInput {
  objectId: string;
  observations: TrackletObservation[];
  /** The notice orbit block, when one was given (checked as the store read it back). */
  orbit: OrbitBlock | null;
  nowIso: string;
  /** The object's estimate kept in the store (its key and bytes), if any: used when the data have not changed. */
  kept?: KeptEstimate | null;
  /** Take a first look (a cheaper estimate, planning's first-look.ts): new data wait in a backlog. */
  firstLook?: boolean;
}

/** What it returns: the stored summary, the proposed requests, and whether the object has no future anywhere. */
export interface AssessOutput {
  summary: unknown;
  requests: NewRequest[];
  /** Set when no site has a window within the horizon: the object is retired with this reason. */
  retireReason: string | null;
  /** When the object is next usable and until when (ISO UTC; planning's usableSpan): the next replan's class. */
  usable?: { from: string | null; until: string | null };
  /** The estimate's key and, when it was computed by this assessment, its bytes to keep in the store. */
  estimate?: { key: string; members: number; keep: Uint8Array | null };
}

/** Assesses one object; never rejects: a failure comes back as a typed value (timeout, crash, refusal, ...). */
export type Assessor = (input: AssessInput) => Promise<TaskResult<AssessOutput>>;

/** An assessor answered on the calling thread (tests, tools): what `assess` throws becomes an `error` failure. */
export function assessInThread(assess: (input: AssessInput) => AssessOutput | Promise<AssessOutput>): Assessor {
  return async (input) => {
    try {
      return { ok: true, value: await assess(input) };
    } catch (err) {
      return { ok: false, failure: { kind: 'error', message: err instanceof Error ? err.message : String(err) } };
    }
  };
}

/** Attempts at one object before its work item stays failed (the work queue's rule). */
export const MAX_ATTEMPTS = 3;

/**
 * How the periodic replan sorts objects (the work queue's `urgent` class): the
 * earliest usable window opens within the hour (the last chance to adjust its
 * requests before the telescope may start), or the last usable time ends within
 * two hours (the object fades below the limits or leaves the sky for good).
 */
export const REPLAN_POLICY: ReplanPolicy = { opensWithinMs: 3_600_000, endsWithinMs: 7_200_000 };

/** The class REPLAN_POLICY gives an object with this usable span at `now` (as the store's enqueueReplans does). */
export function replanClass(usable: { from: string | null; until: string | null }, now: Date): 'urgent' | 'routine' {
  const t = now.getTime();
  const from = usable.from === null ? null : Date.parse(usable.from);
  const until = usable.until === null ? null : Date.parse(usable.until);
  const opens = from !== null && from > t && from <= t + REPLAN_POLICY.opensWithinMs;
  const ends = until !== null && until <= t + REPLAN_POLICY.endsWithinMs;
  return opens || ends ? 'urgent' : 'routine';
}


export interface RunnerDeps {
  config: Config;
  store: Store;
  clock: () => Date;
  assessor: Assessor;
  /** Objects assessed at once (the worker pool size). */
  concurrency: number;
  /**
   * An assessment running longer than this, ms, no longer holds back the queue:
   * the next object starts beside it (up to twice `concurrency` at once), so one
   * pathological object never delays the others by more than this. Default: never.
   */
  slowAfterMs?: number;
  metrics?: ServiceMetrics;
  log?: { info: (o: object, m: string) => void; warn: (o: object, m: string) => void };
  /**
   * New-data items waiting at which an object never assessed in full gets a first look (a
   * cheaper estimate, refined when the queue has room); 0 or absent: never (config planning.firstLookBacklog).
   */
  firstLookBacklog?: number;
}

/** Builds the assessment input of one object from the store. */
export function assessInputFor(store: Store, objectId: string, now: Date): AssessInput {
  return { objectId, nowIso: now.toISOString(), orbit: store.objects.orbitBlock(objectId), observations: store.objects.tracklet(objectId) };
}

/**
 * Drains the work queue: each waiting object is assessed (in the worker pool)
 * and its assessment, requests, superseded requests, webhook announcements and
 * the work item's completion are written in one transaction. A crash at any
 * point leaves the item waiting (or running, requeued at start), never half-written.
 */
export function createAssessmentRunner(deps: RunnerDeps) {
  const { store, clock, config } = deps;
  const hooks = config.service.webhooks;

  function handleRetracted(objectId: string): void {
    const object = store.objects.getObject(objectId);
    const reason = object?.retractionReason ?? 'retracted by the sender';
    const now = clock();
    store.db.transaction(() => {
      const withdrawn = store.requests.withdrawQueuedForObject(objectId, `object retracted: ${reason}`, now);
      if (withdrawn.length > 0) announce(store, hooks, now, { event: 'object.retracted', objectId, reason, withdrawn });
      store.work.finish(objectId, now);
    })();
    deps.log?.info({ objectId, reason }, 'retracted object: queued requests withdrawn');
  }

  /** Records a failed assessment on the work item (retried by the queue's rules) and on the object. */
  function recordFailure(objectId: string, failure: TaskFailure, dataKey: string): void {
    const now = clock();
    if (failure.kind === 'busy' || failure.kind === 'unavailable') {
      // Not the object's fault: it waits for the workers, and the attempt does not count.
      store.work.release(objectId, failure.message, now);
      deps.log?.warn({ objectId, error: failure.message }, 'assessment not started: the object waits');
      return;
    }
    store.db.transaction(() => {
      // A timeout repeats on the same data: it is not retried until new data arrive. Other failures follow the queue's rule.
      store.work.fail(objectId, failure.message, now, failure.kind === 'timeout' ? 1 : MAX_ATTEMPTS);
      if (failure.kind === 'timeout' || failure.kind === 'crashed' || failure.kind === 'error' || failure.kind === 'refused')
        store.objects.recordFailure(objectId, {
          kind: failure.kind,
          stage: 'assessment',
          message: failure.message,
          at: now.toISOString(),
          dataKey,
        });
    })();
    deps.metrics?.assessmentFailures.inc({ kind: failure.kind });
    deps.log?.warn({ objectId, kind: failure.kind, error: failure.message }, 'assessment failed');
  }

  async function assessOne(objectId: string): Promise<'done' | 'waits'> {
    const object = store.objects.getObject(objectId);
    if (!object) {
      store.work.fail(objectId, `no object ${objectId} in the store`, clock(), 1);
      deps.log?.warn({ objectId }, 'work item for an unknown object: failed');
      return 'done';
    }
    if (object.state === 'retracted') {
      handleRetracted(objectId);
      return 'done';
    }
    const dataKey = store.objects.dataKey(objectId);
    if (object.failure?.kind === 'timeout' && object.failure.dataKey === dataKey) {
      // The same data ran over the limit before: not tried again until a notice brings new data.
      store.work.fail(objectId, `not assessed again: ${object.failure.message} on the same data at ${object.failure.at}`, clock(), 1);
      return 'done';
    }
    const started = clock();
    const t0 = performance.now();
    const backlog = deps.firstLookBacklog ?? 0;
    const firstLook = backlog > 0 && store.work.waiting('new-data') >= backlog && !store.objects.assessedInFull(objectId);
    let input: AssessInput;
    try {
      input = assessInputFor(store, objectId, started);
    } catch (err) {
      // Stored data that no longer fit their type fail this object's assessment, not the drain.
      if (!(err instanceof StoredDataError)) throw err;
      recordFailure(objectId, { kind: 'error', message: err.message }, dataKey);
      return 'done';
    }
    const result = await deps.assessor({ ...input, kept: store.keptEstimates.get(objectId), ...(firstLook ? { firstLook } : {}) });
    if (!result.ok) {
      recordFailure(objectId, result.failure, dataKey);
      return result.failure.kind === 'busy' || result.failure.kind === 'unavailable' ? 'waits' : 'done';
    }
    const output = result.value;
    const seconds = (performance.now() - t0) / 1000;
    deps.metrics?.assessmentSeconds.observe(seconds);
    const now = clock();
    const saved = store.db.transaction(() => {
      // A retraction that arrived while we computed wins.
      if (store.objects.getObject(objectId)?.state === 'retracted') return null;
      const result = store.requests.saveAssessment({
        objectId,
        createdAt: now.toISOString(),
        observations: store.objects.tracklet(objectId).length,
        summary: output.summary,
        requests: output.requests,
      });
      const announced = (id: string) => {
        const r = store.requests.get(id)!;
        return { id, objectId, siteId: r.siteId, kind: r.kind, score: r.score, windowStart: r.windowStart, windowEnd: r.windowEnd };
      };
      const queued = result.created.map(announced);
      // Revisions that move a window's end, or the start of a window not yet open, are worth a push;
      // an open window's start following the clock, and score and table updates, are not.
      const nowIso = now.toISOString();
      const moves = (c: { field: string; from: unknown }) => c.field === 'window.end' || (c.field === 'window.start' && typeof c.from === 'string' && c.from > nowIso);
      const rescheduled = result.revised.filter((r) => r.changes.some(moves)).map((r) => announced(r.id));
      for (const request of queued) announce(store, hooks, now, { event: 'request.queued', request });
      if (result.superseded.length > 0 || rescheduled.length > 0)
        announce(store, hooks, now, { event: 'object.replanned', objectId, assessmentId: result.assessmentId, queued, rescheduled, superseded: result.superseded });
      if (output.retireReason !== null && result.created.length === 0) store.objects.retire(objectId, output.retireReason);
      store.objects.clearFailure(objectId);
      const usable = output.usable ?? { from: null, until: null };
      store.objects.recordUsable(objectId, usable, firstLook ? now.toISOString() : null);
      if (output.estimate?.keep && !firstLook) store.keptEstimates.put(objectId, output.estimate.key, output.estimate.members, output.estimate.keep, now);
      store.work.finish(objectId, now);
      // A first look is refined by the full assessment once the new data are done (its class comes after theirs).
      if (firstLook) store.work.enqueueReplan(objectId, now, replanClass(usable, now), now);
      return result;
    })();
    if (saved === null) {
      handleRetracted(objectId);
      return 'done';
    }
    deps.log?.info(
      {
        objectId,
        assessmentId: saved.assessmentId,
        queued: saved.created.length,
        revised: saved.revised.length,
        superseded: saved.superseded.length,
        ...(firstLook ? { firstLook } : {}),
        seconds: Number(seconds.toFixed(3)),
      },
      'object assessed',
    );
    return 'done';
  }

  /**
   * A fault outside the worker (the store refusing a write, say) while one object was handled: that
   * object's work fails under the queue's rules and the drain goes on with the others, rather than
   * the drain, and with it the service, stopping on an unhandled rejection.
   */
  function failedUnexpectedly(objectId: string, err: unknown): void {
    const message = `assessment stopped by a fault in the service: ${err instanceof Error ? err.message : String(err)}`;
    deps.log?.warn({ objectId, err }, 'assessment stopped by a fault in the service');
    try {
      recordFailure(objectId, { kind: 'error', message }, store.objects.dataKey(objectId));
    } catch (inner) {
      // The store itself is failing: the item stays running and is requeued at the next start.
      deps.log?.warn({ objectId, err: inner }, 'could not record the failure');
    }
  }

  let draining: Promise<number> | null = null;
  let halted = false;

  return {
    assessOne,
    /**
     * Assesses waiting objects until none is left; `concurrency` at once, and
     * beside those that have run longer than `slowAfterMs` up to as many more.
     * Stops early when the workers cannot take work (the objects wait). Returns
     * how many were handled.
     */
    drain(): Promise<number> {
      draining ??= (async () => {
        let handled = 0;
        let workersDown = false;
        const inFlight = new Map<Promise<void>, number>();
        const limit = Math.max(1, deps.concurrency);
        const slowAfterMs = deps.slowAfterMs ?? Number.POSITIVE_INFINITY;
        const holding = (nowMs: number) => [...inFlight.values()].filter((startMs) => nowMs - startMs < slowAfterMs).length;
        for (;;) {
          while (!halted && !workersDown && holding(performance.now()) < limit && inFlight.size < 2 * limit) {
            const item = store.work.claimNext(clock());
            if (!item) break;
            const p: Promise<void> = assessOne(item.objectId)
              .then((outcome) => {
                if (outcome === 'waits') workersDown = true;
              })
              .catch((err: unknown) => failedUnexpectedly(item.objectId, err))
              .finally(() => inFlight.delete(p));
            inFlight.set(p, performance.now());
            handled += 1;
          }
          if (inFlight.size === 0) break;
          // Wake when one finishes, or when the oldest of those holding a place turns slow.
          const nowMs = performance.now();
          const nextSlow = Math.min(...[...inFlight.values()].map((startMs) => startMs + slowAfterMs).filter((t) => t > nowMs));
          const timers: NodeJS.Timeout[] = [];
          const wake = Number.isFinite(nextSlow) ? [new Promise<void>((r) => timers.push(setTimeout(r, nextSlow - nowMs + 1)))] : [];
          await Promise.race([...inFlight.keys(), ...wake]);
          for (const t of timers) clearTimeout(t);
        }
        return handled;
      })().finally(() => {
        draining = null;
      });
      return draining;
    },
    /** Stops taking new work (for a graceful stop); assessments in progress finish and are stored. */
    halt(): void {
      halted = true;
    },
    /** Puts every active object back on the work queue in its class (time moves; windows and scores change). Returns how many are active. */
    enqueueActive(): number {
      return store.work.enqueueReplans(clock(), REPLAN_POLICY);
    },
  };
}

export type AssessmentRunner = ReturnType<typeof createAssessmentRunner>;
