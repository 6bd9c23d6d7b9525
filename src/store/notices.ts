import type { Db } from './database.js';

/** An observation row ready to store (degrees, arcsec, metres; ISO UTC time). */
export interface ObservationInput {
  t: string;
  raDeg: number;
  decDeg: number;
  sigmaArcsec: number;
  mag: number | null;
  band: string | null;
  obsLatDeg: number;
  obsLonDeg: number;
  obsHeightM: number;
  /** Set: kept but not used by assessments until an operator confirms it (e.g. a possible misidentification). */
  heldReason?: string | null;
}

/** A validated notice, flattened for storage. */
export interface NoticeInput {
  sender: string;
  noticeId: string;
  objectId: string;
  source: string;
  receivedAt: string;
  issuedAt: string;
  raw: string;
  kind: 'observations' | 'retraction';
  retractionReason: string | null;
  orbitJson: string | null;
  observations: ObservationInput[];
}

export type RecordNoticeResult =
  | { status: 'accepted'; noticeRow: number; observationsAdded: number; objectState: ObjectState; queued: boolean; revived: boolean }
  | { status: 'duplicate'; noticeRow: number; sameContent: boolean };

export type ObjectState = 'active' | 'retracted' | 'retired';

export interface RejectionInput {
  source: string;
  receivedAt: string;
  sender: string | null;
  noticeId: string | null;
  raw: string;
  reasons: { path: string; message: string }[];
}

export interface NoticeRow {
  id: number;
  sender: string;
  noticeId: string;
  objectId: string;
  source: string;
  receivedAt: string;
  issuedAt: string;
  kind: 'observations' | 'retraction';
  state: 'received' | 'merged';
  observationsAdded: number;
  raw: string;
}

export interface RejectionRow {
  id: number;
  source: string;
  receivedAt: string;
  sender: string | null;
  noticeId: string | null;
  raw: string;
  reasons: { path: string; message: string }[];
}

/** A rejection without its payload, for lists. */
export interface RejectionSummary {
  id: number;
  source: string;
  receivedAt: string;
  sender: string | null;
  noticeId: string | null;
  /** Size of the payload as received, bytes (UTF-8). */
  sizeBytes: number;
  reasonCount: number;
  reasons: { path: string; message: string }[];
}

const NOTICE_COLUMNS = `id, sender, notice_id AS noticeId, object_id AS objectId, source, received_at AS receivedAt,
  issued_at AS issuedAt, kind, state, observations_added AS observationsAdded, raw`;

/** Notices and rejections: the intake's ledger. Every write is one transaction. */
export function createNoticeStore(db: Db) {
  const findByKey = db.prepare(`SELECT ${NOTICE_COLUMNS} FROM notices WHERE sender = ? AND notice_id = ?`);
  const insertNotice = db.prepare(`INSERT INTO notices
    (sender, notice_id, object_id, source, received_at, issued_at, raw, kind, state)
    VALUES (@sender, @noticeId, @objectId, @source, @receivedAt, @issuedAt, @raw, @kind, 'received')`);
  const markMerged = db.prepare(`UPDATE notices SET state = 'merged', observations_added = ? WHERE id = ?`);
  const getObject = db.prepare(`SELECT state, retracted_at AS retractedAt FROM objects WHERE id = ?`);
  const insertObject = db.prepare(`INSERT INTO objects (id, state, first_notice_at, last_notice_at, retraction_reason, retracted_at, orbit)
    VALUES (?, ?, ?, ?, ?, ?, ?)`);
  const touchObject = db.prepare(`UPDATE objects SET last_notice_at = ?, orbit = COALESCE(?, orbit) WHERE id = ?`);
  const retractObject = db.prepare(`UPDATE objects SET state = 'retracted', retraction_reason = ?, retracted_at = ?, last_notice_at = ? WHERE id = ?`);
  const reviveObject = db.prepare(`UPDATE objects SET state = 'active', retraction_reason = NULL, retracted_at = NULL, retired_reason = NULL WHERE id = ?`);
  const insertObservation = db.prepare(`INSERT OR IGNORE INTO observations
    (object_id, notice_row, t, ra_deg, dec_deg, sigma_arcsec, mag, band, obs_lat_deg, obs_lon_deg, obs_height_m, held_reason)
    VALUES (@objectId, @noticeRow, @t, @raDeg, @decDeg, @sigmaArcsec, @mag, @band, @obsLatDeg, @obsLonDeg, @obsHeightM, @heldReason)`);
  const senderKnows = db.prepare(`SELECT 1 AS known FROM notices n JOIN objects o ON o.id = n.object_id
    WHERE n.sender = ? AND n.object_id = ? AND n.kind = 'observations'
      AND (o.orbit IS NOT NULL OR EXISTS (SELECT 1 FROM observations b WHERE b.object_id = o.id)) LIMIT 1`);
  const enqueue = db.prepare(`INSERT INTO work (object_id, state, attempts, enqueued_at, updated_at) VALUES (?, 'waiting', 0, ?, ?)
    ON CONFLICT (object_id) DO UPDATE SET state = 'waiting', attempts = CASE WHEN work.state = 'running' THEN work.attempts ELSE 0 END,
      last_error = NULL, enqueued_at = excluded.enqueued_at, updated_at = excluded.updated_at`);
  const insertRejection = db.prepare(`INSERT INTO rejections (source, received_at, sender, notice_id, raw, reasons)
    VALUES (?, ?, ?, ?, ?, ?)`);

  const record = db.transaction((input: NoticeInput): RecordNoticeResult => {
    const existing = findByKey.get(input.sender, input.noticeId) as NoticeRow | undefined;
    if (existing) return { status: 'duplicate', noticeRow: existing.id, sameContent: existing.raw === input.raw };
    const noticeRow = Number(insertNotice.run(input).lastInsertRowid);
    const object = getObject.get(input.objectId) as { state: ObjectState; retractedAt: string | null } | undefined;
    let revived = false;
    let objectState: ObjectState;
    if (input.kind === 'retraction') {
      if (object) retractObject.run(input.retractionReason, input.issuedAt, input.receivedAt, input.objectId);
      else insertObject.run(input.objectId, 'retracted', input.receivedAt, input.receivedAt, input.retractionReason, input.issuedAt, input.orbitJson);
      // The object stays on the work queue so the assessment runner withdraws its queued requests and announces it.
      enqueue.run(input.objectId, input.receivedAt, input.receivedAt);
      markMerged.run(0, noticeRow);
      // Nothing is queued for observation: the work item only withdraws the object's requests.
      return { status: 'accepted', noticeRow, observationsAdded: 0, objectState: 'retracted', queued: false, revived: false };
    }
    if (!object) {
      insertObject.run(input.objectId, 'active', input.receivedAt, input.receivedAt, null, null, input.orbitJson);
      objectState = 'active';
    } else {
      touchObject.run(input.receivedAt, input.orbitJson, input.objectId);
      objectState = object.state;
      // A notice issued after the retraction brings the object back; an older one arriving late does not.
      if (object.state === 'retracted' && object.retractedAt !== null && input.issuedAt > object.retractedAt) {
        reviveObject.run(input.objectId);
        objectState = 'active';
        revived = true;
      } else if (object.state === 'retired') {
        reviveObject.run(input.objectId);
        objectState = 'active';
        revived = true;
      }
    }
    let added = 0;
    for (const obs of input.observations) {
      added += insertObservation.run({ ...obs, heldReason: obs.heldReason ?? null, objectId: input.objectId, noticeRow }).changes;
    }
    markMerged.run(added, noticeRow);
    const queued = objectState === 'active' && (added > 0 || input.orbitJson !== null || revived || !object);
    if (queued) enqueue.run(input.objectId, input.receivedAt, input.receivedAt);
    return { status: 'accepted', noticeRow, observationsAdded: added, objectState, queued, revived };
  });

  return {
    /** Stores a validated notice and merges it into its object, all in one transaction; idempotent on (sender, noticeId). */
    recordNotice(input: NoticeInput): RecordNoticeResult {
      return record.immediate(input);
    },
    /** Keeps a rejected payload with every reason. */
    recordRejection(input: RejectionInput): number {
      return Number(
        insertRejection.run(input.source, input.receivedAt, input.sender, input.noticeId, input.raw, JSON.stringify(input.reasons))
          .lastInsertRowid,
      );
    },
    /** True when this sender has already sent observations of this object and the service holds positions or an orbit for it. */
    senderKnowsObject(sender: string, objectId: string): boolean {
      return senderKnows.get(sender, objectId) !== undefined;
    },
    findNotice(sender: string, noticeId: string): NoticeRow | null {
      return (findByKey.get(sender, noticeId) as NoticeRow | undefined) ?? null;
    },
    /** Newest first; `beforeId` is the cursor (the last id of the previous page). */
    listNotices(options: { beforeId?: number; limit: number; objectId?: string }): NoticeRow[] {
      const where: string[] = [];
      const args: (string | number)[] = [];
      if (options.beforeId !== undefined) (where.push('id < ?'), args.push(options.beforeId));
      if (options.objectId !== undefined) (where.push('object_id = ?'), args.push(options.objectId));
      const sql = `SELECT ${NOTICE_COLUMNS} FROM notices ${where.length ? `WHERE ${where.join(' AND ')}` : ''} ORDER BY id DESC LIMIT ?`;
      return db.prepare(sql).all(...args, options.limit) as NoticeRow[];
    },
    listRejections(options: { beforeId?: number; limit: number }): RejectionRow[] {
      const rows = db
        .prepare(
          `SELECT id, source, received_at AS receivedAt, sender, notice_id AS noticeId, raw, reasons FROM rejections
           ${options.beforeId !== undefined ? 'WHERE id < ?' : ''} ORDER BY id DESC LIMIT ?`,
        )
        .all(...(options.beforeId !== undefined ? [options.beforeId] : []), options.limit) as (Omit<RejectionRow, 'reasons'> & {
        reasons: string;
      })[];
      return rows.map((r) => ({ ...r, reasons: JSON.parse(r.reasons) as RejectionRow['reasons'] }));
    },
    /** Newest first, without the payloads: size in bytes and the first `maxReasons` reasons with their count. */
    listRejectionSummaries(options: { beforeId?: number; limit: number; maxReasons: number }): RejectionSummary[] {
      const rows = db
        .prepare(
          `SELECT id, source, received_at AS receivedAt, sender, notice_id AS noticeId, length(CAST(raw AS BLOB)) AS sizeBytes, reasons FROM rejections
           ${options.beforeId !== undefined ? 'WHERE id < ?' : ''} ORDER BY id DESC LIMIT ?`,
        )
        .all(...(options.beforeId !== undefined ? [options.beforeId] : []), options.limit) as (Omit<RejectionSummary, 'reasons' | 'reasonCount'> & { reasons: string })[];
      return rows.map((r) => {
        const reasons = JSON.parse(r.reasons) as RejectionRow['reasons'];
        return { ...r, reasonCount: reasons.length, reasons: reasons.slice(0, options.maxReasons) };
      });
    },
    getRejection(id: number): RejectionRow | null {
      const row = db
        .prepare(`SELECT id, source, received_at AS receivedAt, sender, notice_id AS noticeId, raw, reasons FROM rejections WHERE id = ?`)
        .get(id) as (Omit<RejectionRow, 'reasons'> & { reasons: string }) | undefined;
      return row ? { ...row, reasons: JSON.parse(row.reasons) as RejectionRow['reasons'] } : null;
    },
    counts(): { notices: number; rejections: number; objects: number; observations: number } {
      const one = (sql: string) => (db.prepare(sql).get() as { n: number }).n;
      return {
        notices: one('SELECT count(*) AS n FROM notices'),
        rejections: one('SELECT count(*) AS n FROM rejections'),
        objects: one('SELECT count(*) AS n FROM objects'),
        observations: one('SELECT count(*) AS n FROM observations'),
      };
    },
  };
}

export type NoticeStore = ReturnType<typeof createNoticeStore>;
