import type { Db } from './database.js';

export type WorkState = 'waiting' | 'running' | 'done' | 'failed';

/**
 * Priority classes of the work queue, most pressing first:
 * - `new-data`: new observations (a notice, an outcome's astrometry, a confirmed position);
 * - `urgent`: replans of objects whose usable time begins or ends soon;
 * - `routine`: the other periodic replans.
 * A replan never goes before waiting new data; within a class the item due soonest goes first.
 */
export const WORK_CLASSES = ['new-data', 'urgent', 'routine'] as const;
export type WorkClass = (typeof WORK_CLASSES)[number];

/** The stored number of each class (its rank; lower first). */
const CLASS_RANK: Record<WorkClass, 1 | 2 | 3> = { 'new-data': 1, urgent: 2, routine: 3 };
const classOfRank = (rank: number): WorkClass => WORK_CLASSES[rank - 1] ?? 'routine';

export interface WorkRow {
  objectId: string;
  state: WorkState;
  attempts: number;
  lastError: string | null;
  enqueuedAt: string;
  updatedAt: string;
  priorityClass: WorkClass;
  /** When the item is wanted (ISO UTC): the order within its class. */
  dueAt: string;
}

/** Depth and age of one class: waiting items, and how long the oldest of them has waited. */
export interface ClassFigures {
  waiting: number;
  running: number;
  /** Seconds the oldest waiting item has waited (since it was enqueued); 0 when none waits. */
  oldestAgeS: number;
}

/** How a replan sorts objects into `urgent` and `routine` (see enqueueReplans). */
export interface ReplanPolicy {
  /** An object whose earliest usable window opens within this many ms is urgent. */
  opensWithinMs: number;
  /** An object whose last usable window ends within this many ms is urgent (it fades or sets for good). */
  endsWithinMs: number;
}

const WORK_COLUMNS = `object_id AS objectId, state, attempts, last_error AS lastError, enqueued_at AS enqueuedAt, updated_at AS updatedAt,
  priority_class AS priorityRank, COALESCE(due_at, enqueued_at) AS dueAt`;

type StoredWorkRow = Omit<WorkRow, 'priorityClass'> & { priorityRank: number };
const toRow = (r: StoredWorkRow): WorkRow => {
  const { priorityRank, ...rest } = r;
  return { ...rest, priorityClass: classOfRank(priorityRank) };
};

/**
 * Puts an object's new data on the queue in the first class, in the caller's
 * transaction (the notice store merges and enqueues at once). A waiting item
 * moves up to the first class, keeping the earlier due time and enqueue time if
 * it already was there; a running one waits again, so the new data are assessed
 * after it. Parameters: objectId, at (ISO), dueAt (ISO).
 */
export function newDataStatement(db: Db) {
  const stmt = db.prepare(`INSERT INTO work (object_id, state, attempts, enqueued_at, updated_at, priority_class, due_at)
    VALUES (@objectId, 'waiting', 0, @at, @at, 1, @dueAt)
    ON CONFLICT (object_id) DO UPDATE SET
      attempts = CASE WHEN work.state = 'running' THEN work.attempts ELSE 0 END,
      last_error = NULL,
      enqueued_at = CASE WHEN work.state = 'waiting' AND work.priority_class = 1 THEN work.enqueued_at ELSE excluded.enqueued_at END,
      due_at = CASE WHEN work.state = 'waiting' AND work.priority_class = 1 AND work.due_at < excluded.due_at THEN work.due_at ELSE excluded.due_at END,
      priority_class = 1,
      state = 'waiting',
      updated_at = excluded.updated_at`);
  return (objectId: string, at: string, dueAt: string = at): void => void stmt.run({ objectId, at, dueAt });
}

/** The work queue: objects waiting to be assessed, in priority classes. It lives in SQLite so it survives restarts. */
export function createWorkStore(db: Db) {
  const claim = db.prepare(`UPDATE work SET state = 'running', attempts = attempts + 1, updated_at = ?
    WHERE object_id = (SELECT object_id FROM work WHERE state = 'waiting' ORDER BY priority_class, due_at, object_id LIMIT 1)
    RETURNING ${WORK_COLUMNS}`);
  const enqueueNewData = newDataStatement(db);
  const replans = db.prepare(`INSERT INTO work (object_id, state, attempts, enqueued_at, updated_at, priority_class, due_at)
    SELECT id, 'waiting', 0, @at, @at,
      CASE WHEN (usable_from > @at AND usable_from <= @opensBy) OR usable_until <= @endsBy THEN 2 ELSE 3 END,
      MIN(COALESCE(usable_from, @later), COALESCE(usable_until, @later))
    FROM objects WHERE state = 'active'
    ON CONFLICT (object_id) DO UPDATE SET
      attempts = CASE WHEN work.state = 'waiting' THEN work.attempts ELSE 0 END,
      last_error = CASE WHEN work.state = 'waiting' THEN work.last_error ELSE NULL END,
      enqueued_at = CASE WHEN work.state = 'waiting' THEN work.enqueued_at ELSE excluded.enqueued_at END,
      due_at = CASE WHEN work.state = 'waiting' AND (work.priority_class < excluded.priority_class
                      OR (work.priority_class = excluded.priority_class AND work.due_at <= excluded.due_at)) THEN work.due_at ELSE excluded.due_at END,
      priority_class = CASE WHEN work.state = 'waiting' THEN MIN(work.priority_class, excluded.priority_class) ELSE excluded.priority_class END,
      state = 'waiting',
      updated_at = excluded.updated_at
    WHERE work.state <> 'running'`);
  const figures = db.prepare(`SELECT priority_class AS rank, state, count(*) AS n, MIN(enqueued_at) AS oldest FROM work
    WHERE state IN ('waiting', 'running') GROUP BY priority_class, state`);
  return {
    /** Takes the waiting item of the first class that is due soonest, or null when there is none. */
    claimNext(now: Date): WorkRow | null {
      const row = claim.get(now.toISOString()) as StoredWorkRow | undefined;
      return row ? toRow(row) : null;
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
    /** New data of objects (an outcome's positions, a confirmed position): the first class, due `dueAt` (default now). */
    enqueueNewData: db.transaction((objectIds: readonly string[], now: Date, dueAt: Date = now): void => {
      for (const id of objectIds) enqueueNewData(id, now.toISOString(), dueAt.toISOString());
    }),
    /**
     * Puts an object back on the queue for a replan unless it is waiting or running already, in the
     * routine class due now (a refinement, a follow-up replan). A waiting item keeps its class.
     */
    enqueueReplan(objectId: string, now: Date, priorityClass: Exclude<WorkClass, 'new-data'> = 'routine', dueAt: Date = now): void {
      const at = now.toISOString();
      db.prepare(`INSERT INTO work (object_id, state, attempts, enqueued_at, updated_at, priority_class, due_at) VALUES (?, 'waiting', 0, ?, ?, ?, ?)
        ON CONFLICT (object_id) DO UPDATE SET state = 'waiting', attempts = 0, last_error = NULL, enqueued_at = excluded.enqueued_at,
          updated_at = excluded.updated_at, priority_class = excluded.priority_class, due_at = excluded.due_at
        WHERE work.state IN ('done', 'failed')`).run(objectId, at, at, CLASS_RANK[priorityClass], dueAt.toISOString());
    },
    /**
     * The periodic replan: every active object goes back on the queue unless it is running. Its
     * class comes from its latest assessment (objects.usable_from / usable_until): `urgent` when
     * its earliest usable window opens within `opensWithinMs` or its last one ends within
     * `endsWithinMs`, else `routine`; due at the earlier of the two times (objects with neither
     * last, a day on). An item still waiting keeps its place, moving up if it became more
     * pressing. In SQL alone. Returns how many objects are active.
     */
    enqueueReplans(now: Date, policy: ReplanPolicy): number {
      const ms = now.getTime();
      replans.run({
        at: now.toISOString(),
        opensBy: new Date(ms + policy.opensWithinMs).toISOString(),
        endsBy: new Date(ms + policy.endsWithinMs).toISOString(),
        later: new Date(ms + 86_400_000).toISOString(),
      });
      return (db.prepare(`SELECT count(*) AS n FROM objects WHERE state = 'active'`).get() as { n: number }).n;
    },
    /** After a crash, items left `running` are waiting again (in their class). */
    requeueRunning(now: Date): number {
      return db.prepare(`UPDATE work SET state = 'waiting', updated_at = ? WHERE state = 'running'`).run(now.toISOString()).changes;
    },
    get(objectId: string): WorkRow | null {
      const row = db.prepare(`SELECT ${WORK_COLUMNS} FROM work WHERE object_id = ?`).get(objectId) as StoredWorkRow | undefined;
      return row ? toRow(row) : null;
    },
    counts(): Record<WorkState, number> {
      const rows = db.prepare(`SELECT state, count(*) AS n FROM work GROUP BY state`).all() as { state: WorkState; n: number }[];
      const out: Record<WorkState, number> = { waiting: 0, running: 0, done: 0, failed: 0 };
      for (const r of rows) out[r.state] = r.n;
      return out;
    },
    /** Items waiting in one class. */
    waiting(priorityClass: WorkClass): number {
      return (db.prepare(`SELECT count(*) AS n FROM work WHERE state = 'waiting' AND priority_class = ?`).get(CLASS_RANK[priorityClass]) as { n: number }).n;
    },
    /** Per class: items waiting and running, and the age of the oldest waiting item at `now`. */
    classFigures(now: Date): Record<WorkClass, ClassFigures> {
      const out = Object.fromEntries(WORK_CLASSES.map((c) => [c, { waiting: 0, running: 0, oldestAgeS: 0 }])) as Record<WorkClass, ClassFigures>;
      for (const r of figures.all() as { rank: number; state: 'waiting' | 'running'; n: number; oldest: string }[]) {
        const f = out[classOfRank(r.rank)];
        if (r.state === 'running') f.running = r.n;
        else {
          f.waiting = r.n;
          f.oldestAgeS = Math.max(0, (now.getTime() - Date.parse(r.oldest)) / 1000);
        }
      }
      return out;
    },
  };
}

export type WorkStore = ReturnType<typeof createWorkStore>;
