import type { Db } from './database.js';

/** A stored estimate: the key it was computed under and its bytes (planning's reuse, orbit's storedCoreBytes). */
export interface KeptEstimate {
  key: string;
  bytes: Uint8Array;
}

/**
 * Orbit estimates kept across restarts, one per object (the latest full one),
 * so the first replan after a start does not estimate every object again.
 */
export function createKeptEstimateStore(db: Db) {
  const byObject = db.prepare(`SELECT estimate_key AS key, body AS bytes FROM kept_estimates WHERE object_id = ?`);
  const upsert = db.prepare(`INSERT INTO kept_estimates (object_id, estimate_key, members, body, saved_at) VALUES (?, ?, ?, ?, ?)
    ON CONFLICT (object_id) DO UPDATE SET estimate_key = excluded.estimate_key, members = excluded.members, body = excluded.body, saved_at = excluded.saved_at`);
  return {
    get(objectId: string): KeptEstimate | null {
      const row = byObject.get(objectId) as { key: string; bytes: Buffer } | undefined;
      return row ? { key: row.key, bytes: row.bytes } : null;
    },
    put(objectId: string, key: string, members: number, bytes: Uint8Array, at: Date): void {
      upsert.run(objectId, key, members, bytes, at.toISOString());
    },
    /** How many are kept and their bytes. */
    figures(): { count: number; bytes: number } {
      return db.prepare(`SELECT count(*) AS count, COALESCE(sum(length(body)), 0) AS bytes FROM kept_estimates`).get() as { count: number; bytes: number };
    },
  };
}

export type KeptEstimateStore = ReturnType<typeof createKeptEstimateStore>;
