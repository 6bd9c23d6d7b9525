import type { Db } from './database.js';

export type DeliveryState = 'pending' | 'delivered' | 'failed';

export interface DeliveryRow {
  id: number;
  hookId: string;
  event: string;
  payload: string;
  state: DeliveryState;
  attempts: number;
  nextAttemptAt: string;
  createdAt: string;
  deliveredAt: string | null;
}

export interface DeliveryAttemptRow {
  at: string;
  status: number | null;
  error: string | null;
  durationMs: number;
}

const COLUMNS = `id, hook_id AS hookId, event, payload, state, attempts, next_attempt_at AS nextAttemptAt,
  created_at AS createdAt, delivered_at AS deliveredAt`;

/** The webhook outbox: a delivery is written in the same transaction as the change it announces, then retried until it lands. */
export function createDeliveryStore(db: Db) {
  return {
    enqueue(hookId: string, event: string, payload: string, now: Date): number {
      return Number(
        db
          .prepare(`INSERT INTO deliveries (hook_id, event, payload, state, attempts, next_attempt_at, created_at) VALUES (?, ?, ?, 'pending', 0, ?, ?)`)
          .run(hookId, event, payload, now.toISOString(), now.toISOString()).lastInsertRowid,
      );
    },
    due(now: Date, limit = 50): DeliveryRow[] {
      return db
        .prepare(`SELECT ${COLUMNS} FROM deliveries WHERE state = 'pending' AND next_attempt_at <= ? ORDER BY next_attempt_at, id LIMIT ?`)
        .all(now.toISOString(), limit) as DeliveryRow[];
    },
    /** Records one attempt; `nextAttemptAt` null means give up (failed) unless it was delivered. */
    recordAttempt: db.transaction(
      (id: number, attempt: { at: Date; status: number | null; error: string | null; durationMs: number; delivered: boolean; nextAttemptAt: Date | null }) => {
        db.prepare(`INSERT INTO delivery_attempts (delivery_id, at, status, error, duration_ms) VALUES (?, ?, ?, ?, ?)`).run(
          id,
          attempt.at.toISOString(),
          attempt.status,
          attempt.error,
          attempt.durationMs,
        );
        if (attempt.delivered) {
          db.prepare(`UPDATE deliveries SET state = 'delivered', attempts = attempts + 1, delivered_at = ? WHERE id = ?`).run(attempt.at.toISOString(), id);
        } else if (attempt.nextAttemptAt === null) {
          db.prepare(`UPDATE deliveries SET state = 'failed', attempts = attempts + 1 WHERE id = ?`).run(id);
        } else {
          db.prepare(`UPDATE deliveries SET attempts = attempts + 1, next_attempt_at = ? WHERE id = ?`).run(attempt.nextAttemptAt.toISOString(), id);
        }
      },
    ),
    list(options: { beforeId?: number; limit: number; hookId?: string; state?: DeliveryState }): (DeliveryRow & { attemptLog: DeliveryAttemptRow[] })[] {
      const where: string[] = [];
      const args: (string | number)[] = [];
      if (options.beforeId !== undefined) {
        where.push('id < ?');
        args.push(options.beforeId);
      }
      if (options.hookId) {
        where.push('hook_id = ?');
        args.push(options.hookId);
      }
      if (options.state) {
        where.push('state = ?');
        args.push(options.state);
      }
      const rows = db
        .prepare(`SELECT ${COLUMNS} FROM deliveries ${where.length ? `WHERE ${where.join(' AND ')}` : ''} ORDER BY id DESC LIMIT ?`)
        .all(...args, options.limit) as DeliveryRow[];
      const attempts = db.prepare(`SELECT at, status, error, duration_ms AS durationMs FROM delivery_attempts WHERE delivery_id = ? ORDER BY id`);
      return rows.map((r) => ({ ...r, attemptLog: attempts.all(r.id) as DeliveryAttemptRow[] }));
    },
  };
}

export type DeliveryStore = ReturnType<typeof createDeliveryStore>;
