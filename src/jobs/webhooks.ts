import { Webhook } from 'standardwebhooks';
import type { Config, WebhookConfig } from '../config/schema.js';
import type { Store } from '../store/index.js';
import type { ServiceMetrics } from '../telemetry/metrics.js';
import type { JobSpec } from './scheduler.js';

/**
 * Push for urgent work: when a request at or above a hook's score is queued,
 * or its object is replanned or retracted, a signed POST goes out from the
 * outbox table, retried with backoff until it lands (no loss across restarts).
 *
 * Signed as Standard Webhooks has it (the `standardwebhooks` package): headers
 * `webhook-id` (the same for every attempt of one delivery, so a receiver can
 * refuse one it has seen), `webhook-timestamp` (seconds, the attempt's time, so
 * a receiver can refuse an old one) and `webhook-signature`
 * (`v1,<base64 HMAC-SHA256 of "id.timestamp.body">`).
 */

export const ID_HEADER = 'webhook-id';
export const TIMESTAMP_HEADER = 'webhook-timestamp';
export const SIGNATURE_HEADER = 'webhook-signature';
export const EVENT_HEADER = 'x-nightjar-event';

/** How Standard Webhooks writes a secret: this prefix, then base64. */
export const STANDARD_SECRET_PREFIX = 'whsec_';

export type HookEvent = 'request.queued' | 'object.replanned' | 'object.retracted';

/** The signing key of a hook's secret: `whsec_` + base64 as Standard Webhooks writes it, else the secret's UTF-8 bytes. */
export function signerFor(secret: string): Webhook {
  return secret.startsWith(STANDARD_SECRET_PREFIX) ? new Webhook(secret) : new Webhook(Buffer.from(secret, 'utf8'), { format: 'raw' });
}

/** The id a delivery keeps over all its attempts. */
export function deliveryMessageId(delivery: { id: number; createdAt: string }): string {
  return `nj_${Date.parse(delivery.createdAt).toString(36)}_${delivery.id}`;
}

/** The three signature headers for one attempt at `at`. */
export function signedHeaders(signer: Webhook, messageId: string, at: Date, body: string): Record<string, string> {
  return {
    [ID_HEADER]: messageId,
    [TIMESTAMP_HEADER]: String(Math.floor(at.getTime() / 1000)),
    [SIGNATURE_HEADER]: signer.sign(messageId, at, body),
  };
}

/** Base wait before retry `attempt` (1-based), s: 10 s doubling, at most one hour. */
export function retryBaseS(attempt: number): number {
  return Math.min(3600, 10 * 2 ** Math.max(0, attempt - 1));
}

/**
 * Seconds before retry `attempt` (1-based): the base wait with "equal jitter",
 * half of it fixed and half drawn uniformly (common practice, so deliveries that
 * failed together do not all retry at the same instant): base/2 + u base/2, u in [0, 1).
 */
export function retryDelayS(attempt: number, uniform: () => number = Math.random): number {
  const base = retryBaseS(attempt);
  return base / 2 + uniform() * (base / 2);
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
  /** Uniform numbers in [0, 1) for the retries' jitter (tests fix it). */
  uniform?: () => number;
  /** Stops sending at once (the service is stopping); what is not sent waits in the outbox. */
  signal?: AbortSignal;
}

/** Sends every due delivery once; records each attempt. */
export async function deliverDue(deps: DeliveryDeps): Promise<{ delivered: number; failed: number; retrying: number }> {
  const { config, store, clock } = deps;
  const out = { delivered: 0, failed: 0, retrying: 0 };
  for (const d of store.deliveries.due(clock())) {
    if (deps.signal?.aborted) break;
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
          ...signedHeaders(signerFor(hook.secret), deliveryMessageId(d), startedAt, d.payload),
          [EVENT_HEADER]: d.event,
        },
        body: d.payload,
        signal: deps.signal ? AbortSignal.any([deps.signal, AbortSignal.timeout(hook.timeoutMs)]) : AbortSignal.timeout(hook.timeoutMs),
      });
      status = res.status;
      await res.body?.cancel();
      if (!res.ok) error = `HTTP ${res.status}`;
    } catch (err) {
      // Stopping: the attempt is not counted; the delivery stays due for the next start.
      if (deps.signal?.aborted) break;
      const e = err as Error;
      error = e.name === 'TimeoutError' ? `timed out after ${hook.timeoutMs} ms` : e.message;
    }
    const delivered = error === null;
    const attempt = d.attempts + 1;
    const giveUp = !delivered && attempt >= hook.maxAttempts;
    const next = delivered || giveUp ? null : new Date(clock().getTime() + retryDelayS(attempt, deps.uniform) * 1000);
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
  return [{ name: 'deliver-webhooks', schedule: deps.config.service.schedules.deliverWebhooks, run: async (stopping) => void (await deliverDue({ ...deps, ...(stopping ? { signal: stopping } : {}) })) }];
}
