import type { Db } from './database.js';

export interface SourceStateRow {
  source: string;
  lastAttemptAt: string | null;
  lastSuccessAt: string | null;
  consecutiveFailures: number;
  nextAttemptAt: string | null;
  etag: string | null;
  lastModified: string | null;
  lastError: string | null;
  noticesSeen: number;
}

const COLUMNS = `source, last_attempt_at AS lastAttemptAt, last_success_at AS lastSuccessAt,
  consecutive_failures AS consecutiveFailures, next_attempt_at AS nextAttemptAt, etag, last_modified AS lastModified,
  last_error AS lastError, notices_seen AS noticesSeen`;

/** What each source (inbox, feeds) did last: for backoff, conditional requests and /readyz. */
export function createSourceStore(db: Db) {
  const ensure = db.prepare(`INSERT OR IGNORE INTO source_state (source) VALUES (?)`);
  return {
    get(source: string): SourceStateRow | null {
      return (db.prepare(`SELECT ${COLUMNS} FROM source_state WHERE source = ?`).get(source) as SourceStateRow | undefined) ?? null;
    },
    all(): SourceStateRow[] {
      return db.prepare(`SELECT ${COLUMNS} FROM source_state ORDER BY source`).all() as SourceStateRow[];
    },
    recordSuccess(
      source: string,
      at: Date,
      update: { etag?: string | null; lastModified?: string | null; noticesSeen?: number } = {},
    ): void {
      ensure.run(source);
      db.prepare(
        `UPDATE source_state SET last_attempt_at = @at, last_success_at = @at, consecutive_failures = 0, next_attempt_at = NULL,
           last_error = NULL, etag = COALESCE(@etag, etag), last_modified = COALESCE(@lastModified, last_modified),
           notices_seen = notices_seen + @seen WHERE source = @source`,
      ).run({ source, at: at.toISOString(), etag: update.etag ?? null, lastModified: update.lastModified ?? null, seen: update.noticesSeen ?? 0 });
    },
    recordFailure(source: string, at: Date, error: string, nextAttemptAt: Date): void {
      ensure.run(source);
      db.prepare(
        `UPDATE source_state SET last_attempt_at = ?, consecutive_failures = consecutive_failures + 1, last_error = ?,
           next_attempt_at = ? WHERE source = ?`,
      ).run(at.toISOString(), error.slice(0, 1000), nextAttemptAt.toISOString(), source);
    },
  };
}

export type SourceStore = ReturnType<typeof createSourceStore>;
