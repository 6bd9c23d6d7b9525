import type { FeedConfig } from '../config/schema.js';
import type { SourceStore } from '../store/sources.js';
import type { Intake } from './ingest.js';
import { summarise } from './ingest.js';
import { isEmptyPayload, looksLikeNdjson, MAX_PAYLOAD_BYTES } from './payload.js';

/**
 * HTTP feed polling: a JSON array (or one notice) or NDJSON, fetched with
 * If-None-Match / If-Modified-Since, a timeout, and exponential backoff after
 * failures. The body is streamed and the read stops at FEED_MAX_BYTES. An
 * answer holding notices none of which is valid counts as a failed poll (with
 * backoff), so a feed that sends garbage shows as failing; an empty answer
 * (nothing new) is a success. Notices already stored are recognised by
 * (sender, noticeId) and skipped.
 */

export const FEED_BACKOFF_BASE_S = 15;
/** Largest feed body read, bytes; the read stops there. */
export const FEED_MAX_BYTES = MAX_PAYLOAD_BYTES;

export type FeedPollOutcome =
  | { status: 'skipped'; reason: string; nextAttemptAt: string }
  | { status: 'not-modified' }
  | { status: 'fetched'; accepted: number; duplicate: number; rejected: number }
  | { status: 'failed'; error: string; consecutiveFailures: number; nextAttemptAt: string };

/** Seconds to wait after `failures` consecutive failures: base x 2^(failures-1), capped. */
export function backoffSeconds(failures: number, maxBackoffS: number, baseS = FEED_BACKOFF_BASE_S): number {
  if (failures <= 0) return 0;
  return Math.min(maxBackoffS, baseS * 2 ** Math.min(failures - 1, 30));
}

export function feedSourceName(feed: FeedConfig): string {
  return `feed:${feed.id}`;
}

/** Thrown when a feed answer is larger than the cap; the read stopped there. */
export class FeedTooLargeError extends Error {
  override readonly name = 'FeedTooLargeError';
}

/** Reads the body as bytes, stopping (and cancelling the transfer) once it passes `maxBytes`. */
export async function readCapped(response: Response, maxBytes: number): Promise<Uint8Array> {
  const length = Number(response.headers.get('content-length') ?? '0');
  if (length > maxBytes) {
    await response.body?.cancel();
    throw new FeedTooLargeError(`answer of ${length} bytes (content-length) exceeds the ${maxBytes}-byte limit; not read`);
  }
  if (!response.body) return new Uint8Array(0);
  // A fetch body's chunks are bytes (the Fetch standard); the DOM types leave them `any`.
  const reader = (response.body as ReadableStream<Uint8Array>).getReader();
  const chunks: Uint8Array[] = [];
  let total = 0;
  for (;;) {
    const { done, value } = await reader.read();
    if (done) break;
    total += value.byteLength;
    if (total > maxBytes) {
      await reader.cancel();
      throw new FeedTooLargeError(`answer exceeds the ${maxBytes}-byte limit; the read stopped at ${total} bytes`);
    }
    chunks.push(value);
  }
  const out = new Uint8Array(total);
  let at = 0;
  for (const c of chunks) {
    out.set(c, at);
    at += c.byteLength;
  }
  return out;
}

export interface PollFeedDeps {
  intake: Intake;
  sources: SourceStore;
  now: () => Date;
  fetchFn?: typeof fetch;
  /** Largest answer read, bytes (default FEED_MAX_BYTES). */
  maxBytes?: number;
}

/** Polls one feed once, honouring its backoff. Never throws: failures are recorded and returned. */
export async function pollFeed(feed: FeedConfig, deps: PollFeedDeps): Promise<FeedPollOutcome> {
  const source = feedSourceName(feed);
  const start = deps.now();
  const state = deps.sources.get(source);
  if (state?.nextAttemptAt && Date.parse(state.nextAttemptAt) > start.getTime()) {
    return { status: 'skipped', reason: `backing off after ${state.consecutiveFailures} failure(s)`, nextAttemptAt: state.nextAttemptAt };
  }
  const headers: Record<string, string> = { accept: 'application/json, application/x-ndjson' };
  if (state?.etag) headers['if-none-match'] = state.etag;
  if (state?.lastModified) headers['if-modified-since'] = state.lastModified;
  try {
    const response = await (deps.fetchFn ?? fetch)(feed.url, { headers, signal: AbortSignal.timeout(feed.timeoutMs) });
    if (response.status === 304) {
      await response.body?.cancel();
      deps.sources.recordSuccess(source, deps.now());
      return { status: 'not-modified' };
    }
    if (!response.ok) {
      await response.body?.cancel();
      throw new Error(`HTTP ${response.status} ${response.statusText}`);
    }
    const bytes = await readCapped(response, deps.maxBytes ?? FEED_MAX_BYTES);
    const validators = { etag: response.headers.get('etag'), lastModified: response.headers.get('last-modified') };
    // Nothing new: an empty body or an empty array is not a refusal.
    const text = new TextDecoder('utf-8').decode(bytes);
    if (isEmptyPayload(text)) {
      deps.sources.recordSuccess(source, deps.now(), validators);
      return { status: 'fetched', accepted: 0, duplicate: 0, rejected: 0 };
    }
    // The bytes go to intake, which refuses an encoding other than UTF-8 by name.
    const results = looksLikeNdjson(response.headers.get('content-type'), text)
      ? deps.intake.ingestNdjson(bytes, source)
      : deps.intake.ingestJson(bytes, source);
    const counts = summarise(results);
    if (counts.rejected > 0 && counts.accepted + counts.duplicate === 0) {
      const first = results.find((r) => r.status === 'rejected');
      const reason = first?.status === 'rejected' && first.reasons[0] ? ` (first: ${first.reasons[0].path}: ${first.reasons[0].message})` : '';
      return fail(`no valid notice in the answer: ${counts.rejected} refused${reason}`, { noticesSeen: results.length, noticesRejected: counts.rejected });
    }
    deps.sources.recordSuccess(source, deps.now(), { ...validators, noticesSeen: results.length, noticesRejected: counts.rejected });
    return { status: 'fetched', ...counts };
  } catch (err) {
    const e = err instanceof Error ? err : new Error(String(err));
    return fail(e.name === 'TimeoutError' ? `timed out after ${feed.timeoutMs} ms` : e.message, null);
  }

  function fail(message: string, counts: { noticesSeen: number; noticesRejected: number } | null): FeedPollOutcome {
    const failures = (state?.consecutiveFailures ?? 0) + 1;
    const at = deps.now();
    const next = new Date(at.getTime() + backoffSeconds(failures, feed.maxBackoffS) * 1000);
    deps.sources.recordFailure(source, at, message, next, counts);
    return { status: 'failed', error: message, consecutiveFailures: failures, nextAttemptAt: next.toISOString() };
  }
}
