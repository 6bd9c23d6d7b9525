import type { Config } from '../config/schema.js';
import type { TrackletObservation } from '../orbit/estimate-types.js';
import type { Store } from '../store/index.js';
import type { NewRequest } from '../store/requests.js';
import type { ServiceMetrics } from '../telemetry/metrics.js';
import { announce } from './webhooks.js';

/** What an assessment needs, as plain data (it crosses into a worker thread). */
export interface AssessInput {
  objectId: string;
  observations: TrackletObservation[];
  /** The notice orbit block (ISO TT epoch and tp, degrees, au), when one was given. */
  orbit: Record<string, unknown> | null;
  nowIso: string;
}

/** What it returns: the stored summary, the proposed requests, and whether the object has no future anywhere. */
export interface AssessOutput {
  summary: unknown;
  requests: NewRequest[];
  /** Set when no site has a window within the horizon: the object is retired with this reason. */
  retireReason: string | null;
}

export type Assessor = (input: AssessInput) => Promise<AssessOutput>;

export interface RunnerDeps {
  config: Config;
  store: Store;
  clock: () => Date;
  assessor: Assessor;
  /** Objects assessed at once (the worker pool size). */
  concurrency: number;
  metrics?: ServiceMetrics;
  log?: { info: (o: object, m: string) => void; warn: (o: object, m: string) => void };
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

  async function assessOne(objectId: string): Promise<void> {
    const object = store.objects.getObject(objectId);
    if (!object) {
      store.work.fail(objectId, `no object ${objectId} in the store`, clock(), 1);
      deps.log?.warn({ objectId }, 'work item for an unknown object: failed');
      return;
    }
    if (object.state === 'retracted') return handleRetracted(objectId);
    const started = clock();
    const t0 = performance.now();
    let output: AssessOutput;
    try {
      output = await deps.assessor(assessInputFor(store, objectId, started));
    } catch (err) {
      const message = err instanceof Error ? err.message : String(err);
      store.work.fail(objectId, message, clock());
      deps.log?.warn({ objectId, error: message }, 'assessment failed');
      return;
    }
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
      store.work.finish(objectId, now);
      return result;
    })();
    if (saved === null) return handleRetracted(objectId);
    deps.log?.info(
      {
        objectId,
        assessmentId: saved.assessmentId,
        queued: saved.created.length,
        revised: saved.revised.length,
        superseded: saved.superseded.length,
        seconds: Number(seconds.toFixed(3)),
      },
      'object assessed',
    );
  }

  let draining: Promise<number> | null = null;
  let halted = false;

  return {
    assessOne,
    /** Assesses waiting objects until none is left; at most `concurrency` at once. Returns how many were handled. */
    drain(): Promise<number> {
      draining ??= (async () => {
        let handled = 0;
        const inFlight = new Set<Promise<void>>();
        for (;;) {
          while (!halted && inFlight.size < Math.max(1, deps.concurrency)) {
            const item = store.work.claimNext(clock());
            if (!item) break;
            const p: Promise<void> = assessOne(item.objectId).finally(() => inFlight.delete(p));
            inFlight.add(p);
            handled += 1;
          }
          if (inFlight.size === 0) break;
          await Promise.race(inFlight);
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
    /** Puts every active object back on the work queue (time moves; windows and scores change). */
    enqueueActive(): number {
      return store.work.enqueueAllActive(clock());
    },
  };
}

export type AssessmentRunner = ReturnType<typeof createAssessmentRunner>;
