import { createHash, randomBytes, timingSafeEqual } from 'node:crypto';
import type { Db } from './database.js';

export type RequestKind = 'photometry' | 'colours' | 'spectrum';
export type RequestState = 'queued' | 'leased' | 'done' | 'failed' | 'lapsed' | 'superseded' | 'withdrawn';
export const REQUEST_KINDS: readonly RequestKind[] = ['photometry', 'colours', 'spectrum'];
export const REQUEST_STATES: readonly RequestState[] = ['queued', 'leased', 'done', 'failed', 'lapsed', 'superseded', 'withdrawn'];

/** A request as the planner proposes it; `body` is stored as JSON and returned as given. */
export interface NewRequest {
  siteId: string;
  kind: RequestKind;
  score: number;
  windowStart: string;
  windowEnd: string;
  recommendedStart: string;
  expiresAt: string;
  body: unknown;
}

export interface RequestRow {
  id: string;
  objectId: string;
  siteId: string;
  kind: RequestKind;
  state: RequestState;
  score: number;
  windowStart: string;
  windowEnd: string;
  recommendedStart: string;
  expiresAt: string;
  assessmentId: number;
  supersededBy: string | null;
  stateReason: string | null;
  body: unknown;
  leaseHolder: string | null;
  leaseExpiresAt: string | null;
  outcome: unknown;
  createdAt: string;
  updatedAt: string;
}

export interface RequestEvent {
  at: string;
  fromState: RequestState | null;
  toState: RequestState;
  detail: string | null;
}

export interface AssessmentRow {
  id: number;
  objectId: string;
  createdAt: string;
  observations: number;
  summary: unknown;
}

export type LeaseResult =
  | { status: 'leased'; request: RequestRow; leaseToken: string }
  | { status: 'not_found' }
  | { status: 'conflict'; holder: string; until: string }
  | { status: 'not_leasable'; state: RequestState; reason: string };

export type LeaseCheck =
  | { status: 'ok'; request: RequestRow }
  | { status: 'not_found' }
  | { status: 'not_leased'; state: RequestState }
  | { status: 'bad_token' }
  | { status: 'expired'; at: string };

const COLUMNS = `id, object_id AS objectId, site_id AS siteId, kind, state, score, window_start AS windowStart,
  window_end AS windowEnd, recommended_start AS recommendedStart, expires_at AS expiresAt, assessment_id AS assessmentId,
  superseded_by AS supersededBy, state_reason AS stateReason, body, lease_holder AS leaseHolder,
  lease_expires_at AS leaseExpiresAt, outcome, created_at AS createdAt, updated_at AS updatedAt`;

type RawRequestRow = Omit<RequestRow, 'body' | 'outcome'> & { body: string; outcome: string | null; lease_token_hash?: string };

function decode(row: RawRequestRow): RequestRow {
  const { lease_token_hash: _hidden, ...rest } = row;
  return { ...rest, body: JSON.parse(row.body) as unknown, outcome: row.outcome === null ? null : (JSON.parse(row.outcome) as unknown) };
}

const hashToken = (token: string) => createHash('sha256').update(token).digest();

function newRequestId(): string {
  return `rq_${randomBytes(9).toString('base64url')}`;
}

/** Requests, their assessments, leases and history. Every state change is one transaction with its event row. */
export function createRequestStore(db: Db) {
  const byId = db.prepare(`SELECT ${COLUMNS} FROM requests WHERE id = ?`);
  const tokenOf = db.prepare(`SELECT lease_token_hash AS h FROM requests WHERE id = ?`);
  const insertEvent = db.prepare(`INSERT INTO request_events (request_id, at, from_state, to_state, detail) VALUES (?, ?, ?, ?, ?)`);
  const setState = db.prepare(`UPDATE requests SET state = ?, state_reason = ?, updated_at = ? WHERE id = ?`);
  const dataVersion = db.prepare('PRAGMA data_version');
  const totalChanges = db.prepare('SELECT total_changes()');
  const nextStart = db.prepare(`SELECT MIN(window_start) AS t FROM requests WHERE site_id = ? AND state = 'queued' AND window_start > ?`);
  const nextStartOfKind = db.prepare(`SELECT MIN(window_start) AS t FROM requests WHERE site_id = ? AND state = 'queued' AND window_start > ? AND kind = ?`);

  function queueRows(options: { siteId: string; from: string; to: string; kind?: RequestKind; limit: number }): RawRequestRow[] {
    const kindClause = options.kind ? 'AND kind = ?' : '';
    const args: (string | number)[] = [options.siteId, options.from, options.to];
    if (options.kind) args.push(options.kind);
    return db
      .prepare(`SELECT ${COLUMNS} FROM requests WHERE site_id = ? AND state = 'queued' AND window_end > ? AND window_start <= ? ${kindClause}
        ORDER BY score DESC, window_start, id LIMIT ?`)
      .all(...args, options.limit) as RawRequestRow[];
  }

  const get = (id: string): RequestRow | null => {
    const row = byId.get(id) as RawRequestRow | undefined;
    return row ? decode(row) : null;
  };

  function transition(id: string, from: RequestState, to: RequestState, at: string, detail: string | null): void {
    setState.run(to, detail, at, id);
    insertEvent.run(id, at, from, to, detail);
  }

  const saveAssessment = db.transaction(
    (input: { objectId: string; createdAt: string; observations: number; summary: unknown; requests: NewRequest[] }) => {
      const assessmentId = Number(
        db
          .prepare(`INSERT INTO assessments (object_id, created_at, observations, summary) VALUES (?, ?, ?, ?)`)
          .run(input.objectId, input.createdAt, input.observations, JSON.stringify(input.summary)).lastInsertRowid,
      );
      const open = (
        db.prepare(`SELECT ${COLUMNS} FROM requests WHERE object_id = ? AND state IN ('queued', 'leased')`).all(input.objectId) as RawRequestRow[]
      ).map(decode);
      const done = db
        .prepare(`SELECT id, site_id AS siteId, kind, window_start AS windowStart, window_end AS windowEnd, updated_at AS at FROM requests
          WHERE object_id = ? AND state = 'done'`)
        .all(input.objectId) as { id: string; siteId: string; kind: RequestKind; windowStart: string; windowEnd: string; at: string }[];
      const created: string[] = [];
      const skipped: { siteId: string; kind: RequestKind; reason: string }[] = [];
      const insert = db.prepare(`INSERT INTO requests (id, object_id, site_id, kind, state, score, window_start, window_end,
        recommended_start, expires_at, assessment_id, body, created_at, updated_at)
        VALUES (?, ?, ?, ?, 'queued', ?, ?, ?, ?, ?, ?, ?, ?, ?)`);
      const replacement = new Map<string, string>();
      for (const r of input.requests) {
        const leased = open.find((o) => o.state === 'leased' && o.siteId === r.siteId && o.kind === r.kind);
        if (leased) {
          skipped.push({ siteId: r.siteId, kind: r.kind, reason: `request ${leased.id} of this kind is leased by ${leased.leaseHolder ?? 'someone'}` });
          continue;
        }
        // Observed already in this window (the same night): not proposed again; the next night's window is.
        const observed = done.find((d) => d.siteId === r.siteId && d.kind === r.kind && d.windowStart < r.windowEnd && r.windowStart < d.windowEnd);
        if (observed) {
          skipped.push({ siteId: r.siteId, kind: r.kind, reason: `request ${observed.id} of this kind was done in this window (reported ${observed.at})` });
          continue;
        }
        const id = newRequestId();
        insert.run(id, input.objectId, r.siteId, r.kind, r.score, r.windowStart, r.windowEnd, r.recommendedStart, r.expiresAt,
          assessmentId, JSON.stringify(r.body), input.createdAt, input.createdAt);
        insertEvent.run(id, input.createdAt, null, 'queued', `assessment ${assessmentId}`);
        created.push(id);
        replacement.set(`${r.siteId}/${r.kind}`, id);
      }
      const superseded: string[] = [];
      for (const old of open.filter((o) => o.state === 'queued')) {
        const by = replacement.get(`${old.siteId}/${old.kind}`) ?? null;
        db.prepare(`UPDATE requests SET superseded_by = ? WHERE id = ?`).run(by, old.id);
        transition(old.id, 'queued', 'superseded', input.createdAt, by ? `replaced by ${by} (assessment ${assessmentId})` : `assessment ${assessmentId} proposes no ${old.kind} request at ${old.siteId}`);
        superseded.push(old.id);
      }
      return { assessmentId, created, superseded, skipped };
    },
  );

  const lease = db.transaction((id: string, holder: string, seconds: number, now: Date): LeaseResult => {
    const current = get(id);
    if (!current) return { status: 'not_found' };
    const nowIso = now.toISOString();
    if (current.state === 'leased' && current.leaseExpiresAt !== null && current.leaseExpiresAt > nowIso) {
      return { status: 'conflict', holder: current.leaseHolder ?? 'unknown', until: current.leaseExpiresAt };
    }
    if (current.state !== 'queued' && current.state !== 'leased') {
      return { status: 'not_leasable', state: current.state, reason: `the request is ${current.state}` };
    }
    if (current.windowEnd <= nowIso) return { status: 'not_leasable', state: current.state, reason: `its window ended at ${current.windowEnd}` };
    const token = randomBytes(24).toString('base64url');
    const until = new Date(now.getTime() + seconds * 1000).toISOString();
    const changed = db
      .prepare(`UPDATE requests SET state = 'leased', lease_holder = ?, lease_token_hash = ?, lease_expires_at = ?, updated_at = ?
        WHERE id = ? AND (state = 'queued' OR (state = 'leased' AND lease_expires_at <= ?))`)
      .run(holder, hashToken(token).toString('hex'), until, nowIso, id, nowIso).changes;
    if (changed !== 1) {
      const again = get(id)!;
      return { status: 'conflict', holder: again.leaseHolder ?? 'unknown', until: again.leaseExpiresAt ?? nowIso };
    }
    insertEvent.run(id, nowIso, current.state, 'leased', `leased by ${holder} until ${until}`);
    return { status: 'leased', request: get(id)!, leaseToken: token };
  });

  function checkLease(id: string, token: string, now: Date): LeaseCheck {
    const current = get(id);
    if (!current) return { status: 'not_found' };
    if (current.state !== 'leased') return { status: 'not_leased', state: current.state };
    const stored = (tokenOf.get(id) as { h: string | null }).h;
    const presented = hashToken(token);
    if (stored === null || !timingSafeEqual(Buffer.from(stored, 'hex'), presented)) return { status: 'bad_token' };
    if (current.leaseExpiresAt !== null && current.leaseExpiresAt <= now.toISOString()) return { status: 'expired', at: current.leaseExpiresAt };
    return { status: 'ok', request: current };
  }

  const renew = db.transaction((id: string, token: string, seconds: number, now: Date): LeaseCheck => {
    const check = checkLease(id, token, now);
    if (check.status !== 'ok') return check;
    const until = new Date(now.getTime() + seconds * 1000).toISOString();
    db.prepare(`UPDATE requests SET lease_expires_at = ?, updated_at = ? WHERE id = ?`).run(until, now.toISOString(), id);
    insertEvent.run(id, now.toISOString(), 'leased', 'leased', `lease renewed until ${until}`);
    return { status: 'ok', request: get(id)! };
  });

  const recordOutcome = db.transaction(
    (id: string, token: string, outcome: { result: 'done' | 'failed'; observedAt: string; notes: string | null }, now: Date): LeaseCheck => {
      const check = checkLease(id, token, now);
      if (check.status !== 'ok') return check;
      const at = now.toISOString();
      db.prepare(`UPDATE requests SET outcome = ?, lease_token_hash = NULL WHERE id = ?`).run(JSON.stringify(outcome), id);
      transition(id, 'leased', outcome.result, at, outcome.notes ?? `reported ${outcome.result} by ${check.request.leaseHolder ?? 'holder'}`);
      return { status: 'ok', request: get(id)! };
    },
  );

  const withdraw = db.transaction((id: string, reason: string, now: Date): RequestRow | { status: 'not_found' } | { status: 'final'; state: RequestState } => {
    const current = get(id);
    if (!current) return { status: 'not_found' };
    if (current.state !== 'queued' && current.state !== 'leased') return { status: 'final', state: current.state };
    db.prepare(`UPDATE requests SET lease_token_hash = NULL WHERE id = ?`).run(id);
    transition(id, current.state, 'withdrawn', now.toISOString(), reason);
    return get(id)!;
  });

  return {
    get,
    saveAssessment(input: { objectId: string; createdAt: string; observations: number; summary: unknown; requests: NewRequest[] }) {
      return saveAssessment.immediate(input);
    },
    lease(id: string, holder: string, seconds: number, now: Date): LeaseResult {
      return lease.immediate(id, holder, seconds, now);
    },
    renew(id: string, token: string, seconds: number, now: Date): LeaseCheck {
      return renew.immediate(id, token, seconds, now);
    },
    recordOutcome(id: string, token: string, outcome: { result: 'done' | 'failed'; observedAt: string; notes: string | null }, now: Date): LeaseCheck {
      return recordOutcome.immediate(id, token, outcome, now);
    },
    withdraw(id: string, reason: string, now: Date) {
      return withdraw.immediate(id, reason, now);
    },
    /** A retracted object's queued requests become withdrawn with the sender's reason. */
    withdrawQueuedForObject: db.transaction((objectId: string, reason: string, now: Date): string[] => {
      const ids = (db.prepare(`SELECT id FROM requests WHERE object_id = ? AND state = 'queued'`).all(objectId) as { id: string }[]).map((r) => r.id);
      for (const id of ids) transition(id, 'queued', 'withdrawn', now.toISOString(), reason);
      return ids;
    }),
    /** Leases that ran out go back to queued (or lapse when their window has passed). Returns the ids. */
    expireLeases: db.transaction((now: Date): string[] => {
      const at = now.toISOString();
      const rows = db.prepare(`SELECT id, window_end AS windowEnd, lease_holder AS holder FROM requests WHERE state = 'leased' AND lease_expires_at <= ?`).all(at) as {
        id: string;
        windowEnd: string;
        holder: string | null;
      }[];
      for (const r of rows) {
        db.prepare(`UPDATE requests SET lease_holder = NULL, lease_token_hash = NULL, lease_expires_at = NULL WHERE id = ?`).run(r.id);
        if (r.windowEnd <= at) transition(r.id, 'leased', 'lapsed', at, `lease of ${r.holder ?? 'holder'} ran out after the window ended`);
        else transition(r.id, 'leased', 'queued', at, `lease of ${r.holder ?? 'holder'} ran out without an outcome`);
      }
      return rows.map((r) => r.id);
    }),
    /** Queued requests whose window has passed become lapsed. Returns the ids. */
    lapse: db.transaction((now: Date): string[] => {
      const at = now.toISOString();
      const ids = (db.prepare(`SELECT id FROM requests WHERE state = 'queued' AND window_end <= ?`).all(at) as { id: string }[]).map((r) => r.id);
      for (const id of ids) transition(id, 'queued', 'lapsed', at, 'window passed unobserved');
      return ids;
    }),
    /** Queued requests for a site whose window is open at `from` or opens before `to`, best score first. */
    queue(options: { siteId: string; from: string; to: string; kind?: RequestKind; limit: number }): RequestRow[] {
      return queueRows(options).map(decode);
    },
    /** The same as `queue`, with each body left as its stored JSON text (for answering without re-encoding it). */
    /**
     * A value that changes whenever any connection commits a change to the
     * database (SQLite's data_version for other connections, total_changes for
     * this one), so an answer computed from it can be reused while it holds.
     */
    revision(): string {
      return `${String(dataVersion.pluck().get())}:${String(totalChanges.pluck().get())}`;
    },
    /** The earliest window start after `after` among a site's queued requests (optionally of one kind), or null. */
    nextQueuedWindowStart(siteId: string, after: string, kind?: RequestKind): string | null {
      const row = (kind ? nextStartOfKind.get(siteId, after, kind) : nextStart.get(siteId, after)) as { t: string | null } | undefined;
      return row?.t ?? null;
    },
    queueWithBodyText(options: { siteId: string; from: string; to: string; kind?: RequestKind; limit: number }): { row: Omit<RequestRow, 'body'>; bodyJson: string }[] {
      return queueRows(options).map((raw) => {
        const { body, ...rest } = decode({ ...raw, body: 'null' });
        void body;
        return { row: rest, bodyJson: raw.body };
      });
    },
    /** Filtered list ordered by creation (newest first); `cursor` is the last id's created_at|id of the previous page. */
    list(options: { state?: RequestState; siteId?: string; objectId?: string; before?: { createdAt: string; id: string }; limit: number }): RequestRow[] {
      const where: string[] = [];
      const args: (string | number)[] = [];
      if (options.state) (where.push('state = ?'), args.push(options.state));
      if (options.siteId) (where.push('site_id = ?'), args.push(options.siteId));
      if (options.objectId) (where.push('object_id = ?'), args.push(options.objectId));
      if (options.before) (where.push('(created_at < ? OR (created_at = ? AND id < ?))'), args.push(options.before.createdAt, options.before.createdAt, options.before.id));
      return (
        db
          .prepare(`SELECT ${COLUMNS} FROM requests ${where.length ? `WHERE ${where.join(' AND ')}` : ''} ORDER BY created_at DESC, id DESC LIMIT ?`)
          .all(...args, options.limit) as RawRequestRow[]
      ).map(decode);
    },
    history(id: string): RequestEvent[] {
      return db
        .prepare(`SELECT at, from_state AS fromState, to_state AS toState, detail FROM request_events WHERE request_id = ? ORDER BY id`)
        .all(id) as RequestEvent[];
    },
    latestAssessment(objectId: string): AssessmentRow | null {
      const row = db
        .prepare(`SELECT id, object_id AS objectId, created_at AS createdAt, observations, summary FROM assessments WHERE object_id = ? ORDER BY id DESC LIMIT 1`)
        .get(objectId) as (Omit<AssessmentRow, 'summary'> & { summary: string }) | undefined;
      return row ? { ...row, summary: JSON.parse(row.summary) as unknown } : null;
    },
    assessments(objectId: string): Omit<AssessmentRow, 'summary'>[] {
      return db
        .prepare(`SELECT id, object_id AS objectId, created_at AS createdAt, observations FROM assessments WHERE object_id = ? ORDER BY id DESC`)
        .all(objectId) as Omit<AssessmentRow, 'summary'>[];
    },
    /** Queued requests per site, for metrics. */
    queueDepth(): { siteId: string; n: number }[] {
      return db.prepare(`SELECT site_id AS siteId, count(*) AS n FROM requests WHERE state = 'queued' GROUP BY site_id`).all() as { siteId: string; n: number }[];
    },
    countByState(): Record<RequestState, number> {
      const out = Object.fromEntries(REQUEST_STATES.map((s) => [s, 0])) as Record<RequestState, number>;
      for (const r of db.prepare(`SELECT state, count(*) AS n FROM requests GROUP BY state`).all() as { state: RequestState; n: number }[]) out[r.state] = r.n;
      return out;
    },
  };
}

export type RequestStore = ReturnType<typeof createRequestStore>;
