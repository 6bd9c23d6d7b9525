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
  /** Notices of this source that were refused, since the database was made. */
  noticesRejected: number;
  /** Notices and refusals in the last answer that held any (feeds). */
  lastPollNotices: number | null;
  lastPollRejected: number | null;
}

/** An inbox file that failed to be read at least once and is still in the inbox. */
export interface InboxAttemptRow {
  file: string;
  attempts: number;
  lastError: string | null;
  updatedAt: string;
}

const COLUMNS = `source, last_attempt_at AS lastAttemptAt, last_success_at AS lastSuccessAt,
  consecutive_failures AS consecutiveFailures, next_attempt_at AS nextAttemptAt, etag, last_modified AS lastModified,
  last_error AS lastError, notices_seen AS noticesSeen, notices_rejected AS noticesRejected,
  last_poll_notices AS lastPollNotices, last_poll_rejected AS lastPollRejected`;

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
      update: { etag?: string | null; lastModified?: string | null; noticesSeen?: number; noticesRejected?: number } = {},
    ): void {
      ensure.run(source);
      db.prepare(
        `UPDATE source_state SET last_attempt_at = @at, last_success_at = @at, consecutive_failures = 0, next_attempt_at = NULL,
           last_error = NULL, etag = COALESCE(@etag, etag), last_modified = COALESCE(@lastModified, last_modified),
           notices_seen = notices_seen + @seen, notices_rejected = notices_rejected + @rejected,
           last_poll_notices = CASE WHEN @seen > 0 THEN @seen ELSE last_poll_notices END,
           last_poll_rejected = CASE WHEN @seen > 0 THEN @rejected ELSE last_poll_rejected END WHERE source = @source`,
      ).run({
        source,
        at: at.toISOString(),
        etag: update.etag ?? null,
        lastModified: update.lastModified ?? null,
        seen: update.noticesSeen ?? 0,
        rejected: update.noticesRejected ?? 0,
      });
    },
    /** A failed attempt; `counts` adds the notices it read (an answer with no valid notice in it is a failure too). */
    recordFailure(source: string, at: Date, error: string, nextAttemptAt: Date | null, counts: { noticesSeen: number; noticesRejected: number } | null = null): void {
      ensure.run(source);
      db.prepare(
        `UPDATE source_state SET last_attempt_at = @at, consecutive_failures = consecutive_failures + 1, last_error = @error,
           next_attempt_at = @next, notices_seen = notices_seen + @seen, notices_rejected = notices_rejected + @rejected,
           last_poll_notices = CASE WHEN @seen > 0 THEN @seen ELSE last_poll_notices END,
           last_poll_rejected = CASE WHEN @seen > 0 THEN @rejected ELSE last_poll_rejected END WHERE source = @source`,
      ).run({
        source,
        at: at.toISOString(),
        error: error.slice(0, 1000),
        next: nextAttemptAt ? nextAttemptAt.toISOString() : null,
        seen: counts?.noticesSeen ?? 0,
        rejected: counts?.noticesRejected ?? 0,
      });
    },
    /** Counts one more attempt at reading an inbox file (before reading it, so a crash while reading counts too); returns the attempts so far. */
    beginInboxAttempt(file: string, at: Date): InboxAttemptRow {
      return db
        .prepare(
          `INSERT INTO inbox_attempts (file, attempts, updated_at) VALUES (?, 1, ?)
           ON CONFLICT (file) DO UPDATE SET attempts = attempts + 1, updated_at = excluded.updated_at
           RETURNING file, attempts, last_error AS lastError, updated_at AS updatedAt`,
        )
        .get(file, at.toISOString()) as InboxAttemptRow;
    },
    /** Records why reading an inbox file failed. */
    failInboxAttempt(file: string, error: string, at: Date): void {
      db.prepare(`UPDATE inbox_attempts SET last_error = ?, updated_at = ? WHERE file = ?`).run(error.slice(0, 2000), at.toISOString(), file);
    },
    /** The file was read (or moved away): its attempts are forgotten. */
    endInboxAttempts(file: string): void {
      db.prepare(`DELETE FROM inbox_attempts WHERE file = ?`).run(file);
    },
    /** Forgets the attempts at files that are no longer waiting in the inbox (moved away by hand, or renamed). */
    forgetInboxAttemptsExcept(files: readonly string[]): void {
      const keep = new Set(files);
      const rows = db.prepare(`SELECT file FROM inbox_attempts`).all() as { file: string }[];
      const drop = db.prepare(`DELETE FROM inbox_attempts WHERE file = ?`);
      for (const r of rows) if (!keep.has(r.file)) drop.run(r.file);
    },
    /** Inbox files that failed at least once and are still waiting, for /readyz. */
    failingInboxFiles(): InboxAttemptRow[] {
      return db
        .prepare(`SELECT file, attempts, last_error AS lastError, updated_at AS updatedAt FROM inbox_attempts WHERE last_error IS NOT NULL ORDER BY file`)
        .all() as InboxAttemptRow[];
    },
  };
}

export type SourceStore = ReturnType<typeof createSourceStore>;
