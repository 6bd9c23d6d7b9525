/**
 * Reuse of `GET /v1/queue` answers. A queue answer changes only when the
 * database changes (a new assessment, a lease, an outcome, an expiry: all
 * writes) or when time moves a window in or out of the asked interval. So the
 * items of the last answer per (site, kind, limit) are kept with the database
 * revision they were read at and the interval they hold for: until the first
 * included window ends (`from` may grow up to it) and until the next queued
 * window starts (`to` may grow up to it). Schedulers polling every few seconds
 * then get the same bytes without SQLite reads or JSON encoding, and the same
 * entity tag, so a conditional request is answered 304.
 */

export interface QueueItemsKey {
  siteId: string;
  kind: string | undefined;
  limit: number;
  /** The page asked for (the cursor given), undefined for the first. */
  cursor?: string | undefined;
}

export interface KeptQueueAnswer {
  revision: string;
  fromMs: number;
  toMs: number;
  /** Earliest window end among the items (Infinity when none): beyond it an item leaves. */
  itemsValidBeforeMs: number;
  /** Earliest window start after `to` of a queued request not in the answer (Infinity when none): from it one joins. */
  noNewItemBeforeMs: number;
  /** The items array's contents, UTF-8 JSON. */
  itemsJson: Buffer;
  /** The cursor of the next page, null on the last. */
  nextCursor: string | null;
  /** Entity tag of the items and the next cursor (an HTTP ETag value, quotes included). */
  etag: string;
}

const MAX_KEPT = 64;

export function createQueueAnswers() {
  const kept = new Map<string, KeptQueueAnswer>();
  const keyOf = (k: QueueItemsKey) => `${k.siteId}|${k.kind ?? ''}|${k.limit}|${k.cursor ?? ''}`;
  return {
    /** The kept items for this query, or null when the database or the interval rules it out. */
    lookup(key: QueueItemsKey, revision: string, fromMs: number, toMs: number): KeptQueueAnswer | null {
      const k = kept.get(keyOf(key));
      if (!k || k.revision !== revision) return null;
      if (fromMs < k.fromMs || fromMs >= k.itemsValidBeforeMs) return null;
      if (toMs < k.toMs || toMs >= k.noNewItemBeforeMs) return null;
      return k;
    },
    keep(key: QueueItemsKey, entry: KeptQueueAnswer): void {
      const name = keyOf(key);
      kept.delete(name);
      kept.set(name, entry);
      if (kept.size > MAX_KEPT) kept.delete(kept.keys().next().value!);
    },
  };
}
