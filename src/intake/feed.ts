import type { FeedConfig } from '../config/schema.js';
import type { SourceStore } from '../store/sources.js';
import type { Intake } from './ingest.js';
import { summarise } from './ingest.js';

/**
 * HTTP feed polling: a JSON array (or one notice) or NDJSON, fetched with
 * If-None-Match / If-Modified-Since, a timeout, and exponential backoff after
 * failures. Notices already stored are recognised by (sender, noticeId) and skipped.
 */

export const FEED_BACKOFF_BASE_S = 15;
/** Largest feed body read, bytes. */
export const FEED_MAX_BYTES = 32 * 1024 * 1024;

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

async function readLimited(response: Response, maxBytes: number): Promise<string> {
  const length = Number(response.headers.get('content-length') ?? '0');
  if (length > maxBytes) throw new Error(`body of ${length} bytes exceeds ${maxBytes}`);
  const text = await response.text();
  if (text.length > maxBytes) throw new Error(`body exceeds ${maxBytes} bytes`);
  return text;
}

function looksLikeNdjson(contentType: string | null, body: string): boolean {
  if (contentType?.includes('ndjson') || contentType?.includes('jsonlines')) return true;
  const trimmed = body.trimStart();
  if (trimmed.startsWith('[')) return false;
  const lines = trimmed.split(/\r?\n/).filter((l) => l.trim() !== '');
  return lines.length > 1;
}

export interface PollFeedDeps {
  intake: Intake;
  sources: SourceStore;
  now: () => Date;
  fetchFn?: typeof fetch;
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
    const body = await readLimited(response, FEED_MAX_BYTES);
    const results = looksLikeNdjson(response.headers.get('content-type'), body)
      ? deps.intake.ingestNdjson(body, source)
      : deps.intake.ingestJson(body, source);
    const counts = summarise(results);
    deps.sources.recordSuccess(source, deps.now(), {
      etag: response.headers.get('etag'),
      lastModified: response.headers.get('last-modified'),
      noticesSeen: results.length,
    });
    return { status: 'fetched', ...counts };
  } catch (err) {
    const e = err as Error;
    const message = e.name === 'TimeoutError' ? `timed out after ${feed.timeoutMs} ms` : e.message;
    const failures = (state?.consecutiveFailures ?? 0) + 1;
    const at = deps.now();
    const next = new Date(at.getTime() + backoffSeconds(failures, feed.maxBackoffS) * 1000);
    deps.sources.recordFailure(source, at, message, next);
    return { status: 'failed', error: message, consecutiveFailures: failures, nextAttemptAt: next.toISOString() };
  }
}
