import type { Db } from './database.js';

export type WorkState = 'waiting' | 'running' | 'done' | 'failed';

export interface WorkRow {
  objectId: string;
  state: WorkState;
  attempts: number;
  lastError: string | null;
  enqueuedAt: string;
  updatedAt: string;
}

const WORK_COLUMNS = `object_id AS objectId, state, attempts, last_error AS lastError, enqueued_at AS enqueuedAt, updated_at AS updatedAt`;

/** The work queue: objects waiting to be assessed. It lives in SQLite so it survives restarts. */
export function createWorkStore(db: Db) {
  const claim = db.prepare(`UPDATE work SET state = 'running', attempts = attempts + 1, updated_at = ?
    WHERE object_id = (SELECT object_id FROM work WHERE state = 'waiting' ORDER BY enqueued_at, object_id LIMIT 1)
    RETURNING ${WORK_COLUMNS}`);
  return {
    /** Takes the oldest waiting item, or null when there is none. */
    claimNext(now: Date): WorkRow | null {
      return (claim.get(now.toISOString()) as WorkRow | undefined) ?? null;
    },
    finish(objectId: string, now: Date): void {
      db.prepare(`UPDATE work SET state = 'done', last_error = NULL, updated_at = ? WHERE object_id = ? AND state = 'running'`).run(
        now.toISOString(),
        objectId,
      );
    },
    /** A failed attempt goes back to waiting until `maxAttempts`, then stays failed with its error. */
    fail(objectId: string, error: string, now: Date, maxAttempts = 3): void {
      db.prepare(
        `UPDATE work SET state = CASE WHEN attempts >= ? THEN 'failed' ELSE 'waiting' END, last_error = ?, updated_at = ?
         WHERE object_id = ? AND state = 'running'`,
      ).run(maxAttempts, error.slice(0, 2000), now.toISOString(), objectId);
    },
    /** A running item goes back to waiting without counting the attempt (the workers could not take it), with why. */
    release(objectId: string, reason: string, now: Date): void {
      db.prepare(
        `UPDATE work SET state = 'waiting', attempts = MAX(0, attempts - 1), last_error = ?, updated_at = ? WHERE object_id = ? AND state = 'running'`,
      ).run(reason.slice(0, 2000), now.toISOString(), objectId);
    },
    /** Puts objects back on the queue unless they are already waiting or running (the periodic replan). */
    enqueueIdle: db.transaction((objectIds: readonly string[], now: Date): void => {
      const stmt = db.prepare(`INSERT INTO work (object_id, state, attempts, enqueued_at, updated_at) VALUES (?, 'waiting', 0, ?, ?)
        ON CONFLICT (object_id) DO UPDATE SET state = 'waiting', attempts = 0, last_error = NULL, enqueued_at = excluded.enqueued_at,
        updated_at = excluded.updated_at WHERE work.state IN ('done', 'failed')`);
      for (const id of objectIds) stmt.run(id, now.toISOString(), now.toISOString());
    }),
    /**
     * Puts every active object back on the queue unless it is already waiting or
     * running (the periodic replan), in SQL alone, so no id takes a round trip
     * through the API's strings. Returns how many active objects there are.
     */
    enqueueAllActive(now: Date): number {
      const at = now.toISOString();
      db.prepare(`INSERT INTO work (object_id, state, attempts, enqueued_at, updated_at)
        SELECT id, 'waiting', 0, @at, @at FROM objects WHERE state = 'active' ORDER BY id
        ON CONFLICT (object_id) DO UPDATE SET state = 'waiting', attempts = 0, last_error = NULL, enqueued_at = excluded.enqueued_at,
        updated_at = excluded.updated_at WHERE work.state IN ('done', 'failed')`).run({ at });
      return (db.prepare(`SELECT count(*) AS n FROM objects WHERE state = 'active'`).get() as { n: number }).n;
    },
    /** After a crash, items left `running` are waiting again. */
    requeueRunning(now: Date): number {
      return db.prepare(`UPDATE work SET state = 'waiting', updated_at = ? WHERE state = 'running'`).run(now.toISOString()).changes;
    },
    get(objectId: string): WorkRow | null {
      return (db.prepare(`SELECT ${WORK_COLUMNS} FROM work WHERE object_id = ?`).get(objectId) as WorkRow | undefined) ?? null;
    },
    counts(): Record<WorkState, number> {
      const rows = db.prepare(`SELECT state, count(*) AS n FROM work GROUP BY state`).all() as { state: WorkState; n: number }[];
      const out: Record<WorkState, number> = { waiting: 0, running: 0, done: 0, failed: 0 };
      for (const r of rows) out[r.state] = r.n;
      return out;
    },
  };
}

export type WorkStore = ReturnType<typeof createWorkStore>;
