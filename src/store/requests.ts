import { createHash, randomBytes, timingSafeEqual } from 'node:crypto';
import type { RequestKind } from '../domain/request-kind.js';
import type { Db } from './database.js';

export type RequestState = 'queued' | 'leased' | 'done' | 'failed' | 'lapsed' | 'superseded' | 'withdrawn';
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
  /** Local date (YYYY-MM-DD) of the evening the window's night begins at the site; a replan revises a request of the same night. */
  night?: string | null;
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
  leasedAt: string | null;
  outcome: unknown;
  createdAt: string;
  updatedAt: string;
  /** 1 when proposed; each replan that changes it in place adds one. */
  revision: number;
  revisedAt: string | null;
  night: string | null;
}

/** One field a revision changed, with its value before and after (large values summarised). */
export interface RevisionChange {
  field: string;
  from: unknown;
  to: unknown;
}

export interface RequestRevision {
  revision: number;
  at: string;
  assessmentId: number;
  score: number;
  windowStart: string;
  windowEnd: string;
  /** Empty for the first revision (the proposal itself). */
  changes: RevisionChange[];
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
  | { status: 'not_leasable'; state: RequestState; reason: string; supersededBy: string | null; replacement: string | null };

export type LeaseCheck =
  | { status: 'ok'; request: RequestRow }
  | { status: 'not_found' }
  | { status: 'not_leased'; state: RequestState }
  | { status: 'bad_token' }
  | { status: 'expired'; at: string };

const COLUMNS = `id, object_id AS objectId, site_id AS siteId, kind, state, score, window_start AS windowStart,
  window_end AS windowEnd, recommended_start AS recommendedStart, expires_at AS expiresAt, assessment_id AS assessmentId,
  superseded_by AS supersededBy, state_reason AS stateReason, body, lease_holder AS leaseHolder,
  lease_expires_at AS leaseExpiresAt, leased_at AS leasedAt, outcome, created_at AS createdAt, updated_at AS updatedAt,
  revision, revised_at AS revisedAt, night`;

type RawRequestRow = Omit<RequestRow, 'body' | 'outcome'> & { body: string; outcome: string | null; lease_token_hash?: string };

function decode(row: RawRequestRow): RequestRow {
  const { lease_token_hash: _hidden, ...rest } = row;
  return { ...rest, body: JSON.parse(row.body) as unknown, outcome: row.outcome === null ? null : (JSON.parse(row.outcome) as unknown) };
}

const hashToken = (token: string) => createHash('sha256').update(token).digest();

function newRequestId(): string {
  return `rq_${randomBytes(9).toString('base64url')}`;
}

/** What an assessment writes: its summary and the requests it proposes. */
export interface AssessmentInput {
  objectId: string;
  createdAt: string;
  observations: number;
  summary: unknown;
  requests: NewRequest[];
}

/** What saving it did to the object's requests. */
export interface SavedAssessment {
  assessmentId: number;
  /** New ids: a window of another night, or a kind not queued before. */
  created: string[];
  /** Queued requests changed in place (same id, next revision). */
  revised: { id: string; revision: number; changes: RevisionChange[] }[];
  /** Queued requests the assessment proposes again exactly as they are. */
  unchanged: string[];
  superseded: string[];
  skipped: { siteId: string; kind: RequestKind; reason: string }[];
}

interface SlotOf {
  siteId: string;
  kind: RequestKind;
  windowStart: string;
  windowEnd: string;
  night: string | null;
}

const overlaps = (a: SlotOf, b: SlotOf) => a.windowStart < b.windowEnd && b.windowStart < a.windowEnd;

/** The same site and kind, in an overlapping window or in the same night. */
const sameSlot = (a: SlotOf, b: SlotOf) =>
  a.siteId === b.siteId && a.kind === b.kind && (overlaps(a, b) || (a.night !== null && a.night === b.night));

/** Body fields that repeat a request field or only say when it was planned: not revisions of their own. */
const BODY_FIELDS_NOT_COMPARED = new Set(['plannedAtUtc', 'score', 'windowStartUtc', 'windowEndUtc', 'recommendedStartUtc', 'expiresAtUtc']);
/** A changed value longer than this (JSON characters) is summarised in the revision history. */
const MAX_CHANGE_JSON = 400;

/** A large value in words: a table by its rows, anything else by its size. */
function summariseValue(value: unknown, json: string): unknown {
  if (json.length <= MAX_CHANGE_JSON) return value;
  const rows = typeof value === 'object' && value !== null && Array.isArray((value as { rows?: unknown }).rows) ? ((value as { rows: unknown[] }).rows) : null;
  if (rows !== null) {
    const first = rows[0] as { t?: unknown } | undefined;
    const last = rows[rows.length - 1] as { t?: unknown } | undefined;
    return `${rows.length} rows${typeof first?.t === 'string' && typeof last?.t === 'string' ? ` from ${first.t} to ${last.t}` : ''}`;
  }
  return `${json.length} characters of JSON`;
}

/** What a replan changes in a queued request: window edges, start, score, and each plan field that differs. */
function changesBetween(old: RequestRow, r: NewRequest): RevisionChange[] {
  const changes: RevisionChange[] = [];
  const plain: [string, unknown, unknown][] = [
    ['window.start', old.windowStart, r.windowStart],
    ['window.end', old.windowEnd, r.windowEnd],
    ['recommendedStart', old.recommendedStart, r.recommendedStart],
    ['expiresAt', old.expiresAt, r.expiresAt],
    ['score', old.score, r.score],
  ];
  for (const [field, from, to] of plain) if (from !== to) changes.push({ field, from, to });
  const before = old.body;
  const after = r.body;
  if (typeof before === 'object' && before !== null && typeof after === 'object' && after !== null && !Array.isArray(before) && !Array.isArray(after)) {
    const a = before as Record<string, unknown>;
    const b = after as Record<string, unknown>;
    for (const key of new Set([...Object.keys(a), ...Object.keys(b)])) {
      if (BODY_FIELDS_NOT_COMPARED.has(key)) continue;
      const fromJson = JSON.stringify(a[key]) ?? 'null';
      const toJson = JSON.stringify(b[key]) ?? 'null';
      if (fromJson !== toJson) changes.push({ field: `plan.${key}`, from: summariseValue(a[key] ?? null, fromJson), to: summariseValue(b[key] ?? null, toJson) });
    }
  } else if ((JSON.stringify(before) ?? 'null') !== (JSON.stringify(after) ?? 'null')) {
    changes.push({ field: 'plan', from: 'the previous plan', to: 'a new plan' });
  }
  return changes;
}

/** What is stored as a request's outcome: the result, when, notes, and how many positions came with it (and how many were held back). */
export interface OutcomeRecord {
  result: 'done' | 'failed';
  observedAt: string;
  notes: string | null;
  positions?: number;
  held?: number;
}

/** A queue read: a site's queued requests whose window is open at `from` or opens before `to`; `after` continues a page (keyset). */
export interface QueueQuery {
  siteId: string;
  from: string;
  to: string;
  kind?: RequestKind;
  limit: number;
  after?: { score: number; windowStart: string; id: string };
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

  function queueRows(options: QueueQuery): RawRequestRow[] {
    const kindClause = options.kind ? 'AND kind = ?' : '';
    const args: (string | number)[] = [options.siteId, options.from, options.to];
    if (options.kind) args.push(options.kind);
    let afterClause = '';
    if (options.after) {
      afterClause = 'AND (score < ? OR (score = ? AND (window_start > ? OR (window_start = ? AND id > ?))))';
      const a = options.after;
      args.push(a.score, a.score, a.windowStart, a.windowStart, a.id);
    }
    return db
      .prepare(`SELECT ${COLUMNS} FROM requests WHERE site_id = ? AND state = 'queued' AND window_end > ? AND window_start <= ? ${kindClause} ${afterClause}
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

  const insertRevision = db.prepare(`INSERT INTO request_revisions (request_id, revision, at, assessment_id, score, window_start, window_end, changes)
    VALUES (?, ?, ?, ?, ?, ?, ?, ?)`);
  const reviseRow = db.prepare(`UPDATE requests SET score = ?, window_start = ?, window_end = ?, recommended_start = ?, expires_at = ?,
    assessment_id = ?, body = ?, night = ?, revision = revision + 1, revised_at = ?, updated_at = ? WHERE id = ? AND state = 'queued'`);

  const saveAssessment = db.transaction((input: AssessmentInput): SavedAssessment => {
    const assessmentId = Number(
      db
        .prepare(`INSERT INTO assessments (object_id, created_at, observations, summary) VALUES (?, ?, ?, ?)`)
        .run(input.objectId, input.createdAt, input.observations, JSON.stringify(input.summary)).lastInsertRowid,
    );
    const open = (
      db.prepare(`SELECT ${COLUMNS} FROM requests WHERE object_id = ? AND state IN ('queued', 'leased') ORDER BY window_start, id`).all(input.objectId) as RawRequestRow[]
    ).map(decode);
    const done = db
      .prepare(`SELECT id, site_id AS siteId, kind, window_start AS windowStart, window_end AS windowEnd, night, updated_at AS at FROM requests
        WHERE object_id = ? AND state = 'done'`)
      .all(input.objectId) as ({ id: string; at: string } & SlotOf)[];
    const created: string[] = [];
    const revised: { id: string; revision: number; changes: RevisionChange[] }[] = [];
    const unchanged: string[] = [];
    const skipped: { siteId: string; kind: RequestKind; reason: string }[] = [];
    const insert = db.prepare(`INSERT INTO requests (id, object_id, site_id, kind, state, score, window_start, window_end,
      recommended_start, expires_at, assessment_id, body, night, created_at, updated_at)
      VALUES (?, ?, ?, ?, 'queued', ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`);
    const kept = new Set<string>();
    // The requests of this assessment per site and kind, for naming what replaces a superseded one.
    const placed = new Map<string, string>();
    for (const r of input.requests) {
      const slot: SlotOf = { siteId: r.siteId, kind: r.kind, windowStart: r.windowStart, windowEnd: r.windowEnd, night: r.night ?? null };
      const leased = open.find((o) => o.state === 'leased' && sameSlot(o, slot));
      if (leased) {
        kept.add(leased.id);
        skipped.push({ siteId: r.siteId, kind: r.kind, reason: `request ${leased.id} of this kind is leased by ${leased.leaseHolder ?? 'someone'}` });
        continue;
      }
      // Observed already in this window (the same night): not proposed again; the next night's window is.
      const observed = done.find((d) => sameSlot(d, slot));
      if (observed) {
        skipped.push({ siteId: r.siteId, kind: r.kind, reason: `request ${observed.id} of this kind was done in this window (reported ${observed.at})` });
        continue;
      }
      // The same object, site and kind in an overlapping window, else in the same night: revised in place.
      const candidates = open.filter((o) => o.state === 'queued' && !kept.has(o.id) && sameSlot(o, slot));
      const match = candidates.find((o) => overlaps(o, slot)) ?? candidates[0];
      const bodyJson = JSON.stringify(r.body);
      if (match) {
        kept.add(match.id);
        placed.set(`${r.siteId}/${r.kind}`, match.id);
        const changes = changesBetween(match, r);
        if (changes.length === 0) {
          unchanged.push(match.id);
          continue;
        }
        reviseRow.run(r.score, r.windowStart, r.windowEnd, r.recommendedStart, r.expiresAt, assessmentId, bodyJson, r.night ?? match.night, input.createdAt, input.createdAt, match.id);
        insertRevision.run(match.id, match.revision + 1, input.createdAt, assessmentId, r.score, r.windowStart, r.windowEnd, JSON.stringify(changes));
        revised.push({ id: match.id, revision: match.revision + 1, changes });
        continue;
      }
      const id = newRequestId();
      insert.run(id, input.objectId, r.siteId, r.kind, r.score, r.windowStart, r.windowEnd, r.recommendedStart, r.expiresAt,
        assessmentId, bodyJson, r.night ?? null, input.createdAt, input.createdAt);
      insertEvent.run(id, input.createdAt, null, 'queued', `assessment ${assessmentId}`);
      insertRevision.run(id, 1, input.createdAt, assessmentId, r.score, r.windowStart, r.windowEnd, '[]');
      created.push(id);
      if (!placed.has(`${r.siteId}/${r.kind}`)) placed.set(`${r.siteId}/${r.kind}`, id);
    }
    const superseded: string[] = [];
    for (const old of open.filter((o) => o.state === 'queued' && !kept.has(o.id))) {
      const by = placed.get(`${old.siteId}/${old.kind}`) ?? null;
      db.prepare(`UPDATE requests SET superseded_by = ? WHERE id = ?`).run(by, old.id);
      transition(
        old.id,
        'queued',
        'superseded',
        input.createdAt,
        by ? `replaced by ${by}, a window of another night (assessment ${assessmentId})` : `assessment ${assessmentId} proposes no ${old.kind} request at ${old.siteId}`,
      );
      superseded.push(old.id);
    }
    return { assessmentId, created, revised, unchanged, superseded, skipped };
  });

  const openOfSlot = db.prepare(`SELECT id FROM requests WHERE object_id = ? AND site_id = ? AND kind = ? AND state IN ('queued', 'leased')
    ORDER BY window_start, id LIMIT 1`);

  /**
   * The request to take instead of one that is no longer open: the end of its
   * superseded-by chain when that is open, else the object's open request of the
   * same site and kind (a later assessment may have proposed it), else null.
   */
  function replacementOf(r: RequestRow): string | null {
    let current: RequestRow | null = r;
    for (let hops = 0; current !== null && current.supersededBy !== null && hops < 100; hops++) current = get(current.supersededBy);
    if (current !== null && current.id !== r.id && (current.state === 'queued' || current.state === 'leased')) return current.id;
    const row = openOfSlot.get(r.objectId, r.siteId, r.kind) as { id: string } | undefined;
    return row?.id ?? null;
  }

  const lease = db.transaction((id: string, holder: string, seconds: number, now: Date): LeaseResult => {
    const current = get(id);
    if (!current) return { status: 'not_found' };
    const nowIso = now.toISOString();
    if (current.state === 'leased' && current.leaseExpiresAt !== null && current.leaseExpiresAt > nowIso) {
      return { status: 'conflict', holder: current.leaseHolder ?? 'unknown', until: current.leaseExpiresAt };
    }
    if (current.state !== 'queued' && current.state !== 'leased') {
      const replacement = replacementOf(current);
      const why = current.stateReason ? `: ${current.stateReason}` : '';
      return {
        status: 'not_leasable',
        state: current.state,
        reason: `the request is ${current.state}${why}${replacement ? `; lease ${replacement} instead` : ''}`,
        supersededBy: current.supersededBy,
        replacement,
      };
    }
    if (current.windowEnd <= nowIso)
      return { status: 'not_leasable', state: current.state, reason: `its window ended at ${current.windowEnd}`, supersededBy: null, replacement: null };
    const token = randomBytes(24).toString('base64url');
    const until = new Date(now.getTime() + seconds * 1000).toISOString();
    const changed = db
      .prepare(`UPDATE requests SET state = 'leased', lease_holder = ?, lease_token_hash = ?, lease_expires_at = ?, leased_at = ?, updated_at = ?
        WHERE id = ? AND (state = 'queued' OR (state = 'leased' AND lease_expires_at <= ?))`)
      .run(holder, hashToken(token).toString('hex'), until, nowIso, nowIso, id, nowIso).changes;
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
    (id: string, token: string, outcome: OutcomeRecord, now: Date): LeaseCheck => {
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
    saveAssessment(input: AssessmentInput): SavedAssessment {
      return saveAssessment.immediate(input);
    },
    /** Whether `token` is the current lease of `id` (no change made). */
    checkLease,
    replacementOf(id: string): string | null {
      const r = get(id);
      return r ? replacementOf(r) : null;
    },
    /** Every revision of a request, first to last, with what each changed. */
    revisions(id: string): RequestRevision[] {
      return (
        db
          .prepare(`SELECT revision, at, assessment_id AS assessmentId, score, window_start AS windowStart, window_end AS windowEnd, changes
            FROM request_revisions WHERE request_id = ? ORDER BY revision`)
          .all(id) as (Omit<RequestRevision, 'changes'> & { changes: string })[]
      ).map((r) => ({ ...r, changes: JSON.parse(r.changes) as RevisionChange[] }));
    },
    lease(id: string, holder: string, seconds: number, now: Date): LeaseResult {
      return lease.immediate(id, holder, seconds, now);
    },
    renew(id: string, token: string, seconds: number, now: Date): LeaseCheck {
      return renew.immediate(id, token, seconds, now);
    },
    recordOutcome(id: string, token: string, outcome: OutcomeRecord, now: Date): LeaseCheck {
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
        db.prepare(`UPDATE requests SET lease_holder = NULL, lease_token_hash = NULL, lease_expires_at = NULL, leased_at = NULL WHERE id = ?`).run(r.id);
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
    queue(options: QueueQuery): RequestRow[] {
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
    queueWithBodyText(options: QueueQuery): { row: Omit<RequestRow, 'body'>; bodyJson: string }[] {
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
      if (options.state) {
        where.push('state = ?');
        args.push(options.state);
      }
      if (options.siteId) {
        where.push('site_id = ?');
        args.push(options.siteId);
      }
      if (options.objectId) {
        where.push('object_id = ?');
        args.push(options.objectId);
      }
      if (options.before) {
        where.push('(created_at < ? OR (created_at = ? AND id < ?))');
        args.push(options.before.createdAt, options.before.createdAt, options.before.id);
      }
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
