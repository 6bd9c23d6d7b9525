import { createHmac } from 'node:crypto';
import type { Config, WebhookConfig } from '../config/schema.js';
import type { Store } from '../store/index.js';
import type { ServiceMetrics } from '../telemetry/metrics.js';
import type { JobSpec } from './scheduler.js';

/**
 * Push for urgent work: when a request at or above a hook's score is queued,
 * or its object is replanned or retracted, a signed POST goes out from the
 * outbox table, retried with backoff until it lands (no loss across restarts).
 */

export const SIGNATURE_HEADER = 'x-nightjar-signature';
export const EVENT_HEADER = 'x-nightjar-event';
export const DELIVERY_HEADER = 'x-nightjar-delivery';

export type HookEvent = 'request.queued' | 'object.replanned' | 'object.retracted';

/** `sha256=<hex HMAC-SHA256 of the raw body with the hook's secret>` */
export function signBody(secret: string, body: string): string {
  return `sha256=${createHmac('sha256', secret).update(body).digest('hex')}`;
}

/** Seconds before retry `attempt` (1-based): 10 s doubling, at most one hour. */
export function retryDelayS(attempt: number): number {
  return Math.min(3600, 10 * 2 ** Math.max(0, attempt - 1));
}

export interface AnnouncedRequest {
  id: string;
  objectId: string;
  siteId: string;
  kind: string;
  score: number;
  windowStart: string;
  windowEnd: string;
}

function wants(hook: WebhookConfig, siteId: string | null, score: number | null): boolean {
  if (siteId !== null && hook.sites && !hook.sites.includes(siteId)) return false;
  return score === null || score >= hook.minScore;
}

/**
 * Writes the outbox rows for one change. Call it inside the transaction that makes
 * the change so the announcement cannot be lost or sent for a change that rolled back.
 */
export function announce(
  store: Store,
  hooks: readonly WebhookConfig[],
  now: Date,
  change:
    | { event: 'request.queued'; request: AnnouncedRequest }
    | { event: 'object.replanned'; objectId: string; assessmentId: number; queued: AnnouncedRequest[]; rescheduled: AnnouncedRequest[]; superseded: string[] }
    | { event: 'object.retracted'; objectId: string; reason: string; withdrawn: string[] },
): number {
  let n = 0;
  for (const hook of hooks) {
    let relevant: boolean;
    if (change.event === 'request.queued') relevant = wants(hook, change.request.siteId, change.request.score);
    else if (change.event === 'object.replanned')
      relevant = [...change.queued, ...change.rescheduled].some((r) => wants(hook, r.siteId, r.score)) || change.superseded.length > 0;
    else relevant = change.withdrawn.length > 0;
    if (!relevant) continue;
    const payload = JSON.stringify({ ...change, at: now.toISOString() });
    store.deliveries.enqueue(hook.id, change.event, payload, now);
    n += 1;
  }
  return n;
}

export interface DeliveryDeps {
  config: Config;
  store: Store;
  clock: () => Date;
  metrics?: ServiceMetrics;
  fetchFn?: typeof fetch;
  log?: { warn: (obj: object, msg: string) => void };
}

/** Sends every due delivery once; records each attempt. */
export async function deliverDue(deps: DeliveryDeps): Promise<{ delivered: number; failed: number; retrying: number }> {
  const { config, store, clock } = deps;
  const out = { delivered: 0, failed: 0, retrying: 0 };
  for (const d of store.deliveries.due(clock())) {
    const hook = config.service.webhooks.find((h) => h.id === d.hookId);
    const startedAt = clock();
    const t0 = performance.now();
    if (!hook) {
      store.deliveries.recordAttempt(d.id, { at: startedAt, status: null, error: `hook ${d.hookId} is no longer configured`, durationMs: 0, delivered: false, nextAttemptAt: null });
      out.failed += 1;
      continue;
    }
    let status: number | null = null;
    let error: string | null = null;
    try {
      const res = await (deps.fetchFn ?? fetch)(hook.url, {
        method: 'POST',
        headers: {
          'content-type': 'application/json',
          [SIGNATURE_HEADER]: signBody(hook.secret, d.payload),
          [EVENT_HEADER]: d.event,
          [DELIVERY_HEADER]: String(d.id),
        },
        body: d.payload,
        signal: AbortSignal.timeout(hook.timeoutMs),
      });
      status = res.status;
      await res.body?.cancel();
      if (!res.ok) error = `HTTP ${res.status}`;
    } catch (err) {
      const e = err as Error;
      error = e.name === 'TimeoutError' ? `timed out after ${hook.timeoutMs} ms` : e.message;
    }
    const delivered = error === null;
    const attempt = d.attempts + 1;
    const giveUp = !delivered && attempt >= hook.maxAttempts;
    const next = delivered || giveUp ? null : new Date(clock().getTime() + retryDelayS(attempt) * 1000);
    store.deliveries.recordAttempt(d.id, { at: startedAt, status, error, durationMs: performance.now() - t0, delivered, nextAttemptAt: next });
    if (delivered) out.delivered += 1;
    else {
      deps.metrics?.webhookFailures.inc({ hook: hook.id });
      deps.log?.warn({ hook: hook.id, delivery: d.id, attempt, error }, giveUp ? 'webhook delivery given up' : 'webhook delivery failed; will retry');
      if (giveUp) out.failed += 1;
      else out.retrying += 1;
    }
  }
  return out;
}

export function webhookJobs(deps: DeliveryDeps): JobSpec[] {
  if (deps.config.service.webhooks.length === 0) return [];
  return [{ name: 'deliver-webhooks', schedule: deps.config.service.schedules.deliverWebhooks, run: async () => void (await deliverDue(deps)) }];
}
