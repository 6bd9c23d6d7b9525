import type { TrackletObservation } from '../domain/tracklet.js';
import type { Db } from './database.js';
import type { StoredObservation } from './objects.js';
import { newDataStatement } from './work.js';

/** An observation row ready to store: the tracklet observation with its observer in columns (degrees, metres). */
export interface ObservationInput extends Omit<TrackletObservation, 'observer'> {
  obsLatDeg: number;
  obsLonDeg: number;
  obsHeightM: number;
  /** Set: kept but not used by assessments until an operator confirms it (e.g. a possible misidentification). */
  heldReason?: string | null;
}

/** Another sender's designation named as the same object (an explicit link). */
export interface NameLink {
  sender: string;
  designation: string;
}

/** A validated notice, flattened for storage. */
export interface NoticeInput {
  sender: string;
  noticeId: string;
  /** The sender's designation; with `sender` it names the object. */
  objectId: string;
  /** The notice names another sender's designation as the same object: its own name then joins that object. */
  link?: NameLink | null;
  /** Merge into this object row whatever the names say (the service's own notices, e.g. astrometry reported with an outcome). */
  intoObject?: string | null;
  source: string;
  receivedAt: string;
  issuedAt: string;
  raw: string;
  kind: 'observations' | 'retraction';
  retractionReason: string | null;
  orbitJson: string | null;
  observations: ObservationInput[];
  /** When its assessment is wanted (ISO UTC), the order among new data; default `receivedAt`. */
  dueAt?: string;
}

export type RecordNoticeResult =
  | { status: 'accepted'; noticeRow: number; objectId: string; observationsAdded: number; objectState: ObjectState; queued: boolean; revived: boolean }
  | { status: 'duplicate'; noticeRow: number; objectId: string; sameContent: boolean }
  | { status: 'refused'; issues: { path: string; message: string }[] };

/**
 * Checks a notice against the object it would merge into before anything is
 * written: `stored` is the object's tracklet so far (empty for a new object).
 * Returns the reasons to refuse it; none to go on.
 */
export type MergeVetting = (stored: readonly StoredObservation[], objectId: string, isNew: boolean) => { path: string; message: string }[];

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
  const objectExists = db.prepare(`SELECT 1 FROM objects WHERE id = ?`);
  const insertObject = db.prepare(`INSERT INTO objects (id, sender, designation, state, first_notice_at, last_notice_at, retraction_reason, retracted_at, orbit)
    VALUES (@id, @sender, @designation, @state, @at, @at, @reason, @retractedAt, @orbit)`);
  const nameOf = db.prepare(`SELECT object_id AS objectId FROM object_names WHERE sender = ? AND designation = ?`);
  const insertName = db.prepare(`INSERT INTO object_names (sender, designation, object_id, named_at, link) VALUES (?, ?, ?, ?, ?)`);
  const touchObject = db.prepare(`UPDATE objects SET last_notice_at = ?, orbit = COALESCE(?, orbit) WHERE id = ?`);
  const retractObject = db.prepare(`UPDATE objects SET state = 'retracted', retraction_reason = ?, retracted_at = ?, last_notice_at = ? WHERE id = ?`);
  const reviveObject = db.prepare(`UPDATE objects SET state = 'active', retraction_reason = NULL, retracted_at = NULL, retired_reason = NULL WHERE id = ?`);
  const observationsOf = db.prepare(`SELECT id, notice_row AS noticeRow, t, ra_deg AS raDeg, dec_deg AS decDeg,
    sigma_arcsec AS sigmaArcsec, mag, band, obs_lat_deg AS obsLatDeg, obs_lon_deg AS obsLonDeg, obs_height_m AS obsHeightM
    FROM observations WHERE object_id = ? ORDER BY t, id`);
  const insertObservation = db.prepare(`INSERT OR IGNORE INTO observations
    (object_id, notice_row, t, ra_deg, dec_deg, sigma_arcsec, mag, band, obs_lat_deg, obs_lon_deg, obs_height_m, held_reason)
    VALUES (@objectId, @noticeRow, @t, @raDeg, @decDeg, @sigmaArcsec, @mag, @band, @obsLatDeg, @obsLonDeg, @obsHeightM, @heldReason)`);
  const senderKnows = db.prepare(`SELECT 1 AS known FROM object_names nm JOIN objects o ON o.id = nm.object_id
    WHERE nm.sender = ? AND nm.designation = ?
      AND EXISTS (SELECT 1 FROM notices n WHERE n.sender = nm.sender AND n.object_id = o.id AND n.kind = 'observations')
      AND (o.orbit IS NOT NULL OR EXISTS (SELECT 1 FROM observations b WHERE b.object_id = o.id)) LIMIT 1`);
  const enqueueNewData = newDataStatement(db);
  const enqueue = (objectId: string, input: NoticeInput): void => enqueueNewData(objectId, input.receivedAt, input.dueAt ?? input.receivedAt);
  const insertRejection = db.prepare(`INSERT INTO rejections (source, received_at, sender, notice_id, raw, reasons)
    VALUES (?, ?, ?, ?, ?, ?)`);

  /** A free object id for a new sender's designation: the designation itself, else the designation with ~2, ~3, ... */
  function freeObjectId(designation: string): string {
    if (!objectExists.get(designation)) return designation;
    for (let k = 2; ; k++) {
      const candidate = `${designation}~${k}`;
      if (!objectExists.get(candidate)) return candidate;
    }
  }

  type Resolved =
    | { ok: true; objectId: string; isNew: boolean; newName: { link: NameLink | null } | null }
    | { ok: false; issues: { path: string; message: string }[] };

  /** Which object a notice's sender and designation (and link) lead to; nothing is written. */
  function resolve(input: NoticeInput): Resolved {
    if (input.intoObject) {
      if (!objectExists.get(input.intoObject)) return { ok: false, issues: [{ path: 'objectId', message: `no object ${input.intoObject}` }] };
      return { ok: true, objectId: input.intoObject, isNew: false, newName: null };
    }
    const own = nameOf.get(input.sender, input.objectId) as { objectId: string } | undefined;
    const link = input.link ?? null;
    if (link) {
      const target = nameOf.get(link.sender, link.designation) as { objectId: string } | undefined;
      if (!target)
        return { ok: false, issues: [{ path: 'linkedTo', message: `no object is known as "${link.designation}" from sender "${link.sender}"; a link names an object already received` }] };
      if (own && own.objectId !== target.objectId)
        return {
          ok: false,
          issues: [
            {
              path: 'linkedTo',
              message: `"${input.objectId}" from sender "${input.sender}" already names object ${own.objectId}, not ${target.objectId}; a link joins a designation not yet used to a known object`,
            },
          ],
        };
      return { ok: true, objectId: target.objectId, isNew: false, newName: own ? null : { link } };
    }
    if (own) return { ok: true, objectId: own.objectId, isNew: false, newName: null };
    return { ok: true, objectId: freeObjectId(input.objectId), isNew: true, newName: { link: null } };
  }

  const record = db.transaction((input: NoticeInput, vet: MergeVetting | undefined): RecordNoticeResult => {
    const existing = findByKey.get(input.sender, input.noticeId) as NoticeRow | undefined;
    if (existing) return { status: 'duplicate', noticeRow: existing.id, objectId: existing.objectId, sameContent: existing.raw === input.raw };
    const resolved = resolve(input);
    if (!resolved.ok) return { status: 'refused', issues: resolved.issues };
    const objectId = resolved.objectId;
    if (vet) {
      const issues = vet(resolved.isNew ? [] : (observationsOf.all(objectId) as StoredObservation[]), objectId, resolved.isNew);
      if (issues.length > 0) return { status: 'refused', issues };
    }
    const noticeRow = Number(insertNotice.run({ ...input, objectId }).lastInsertRowid);
    const object = getObject.get(objectId) as { state: ObjectState; retractedAt: string | null } | undefined;
    const retraction = input.kind === 'retraction';
    if (!object) {
      insertObject.run({
        id: objectId,
        sender: input.sender,
        designation: input.objectId,
        state: retraction ? 'retracted' : 'active',
        at: input.receivedAt,
        reason: retraction ? input.retractionReason : null,
        retractedAt: retraction ? input.issuedAt : null,
        orbit: input.orbitJson,
      });
    }
    if (resolved.newName) {
      const link = resolved.newName.link;
      insertName.run(input.sender, input.objectId, objectId, input.receivedAt, link ? JSON.stringify(link) : null);
    }
    if (retraction) {
      if (object) retractObject.run(input.retractionReason, input.issuedAt, input.receivedAt, objectId);
      // The object stays on the work queue so the assessment runner withdraws its queued requests and announces it.
      enqueue(objectId, input);
      markMerged.run(0, noticeRow);
      // Nothing is queued for observation: the work item only withdraws the object's requests.
      return { status: 'accepted', noticeRow, objectId, observationsAdded: 0, objectState: 'retracted', queued: false, revived: false };
    }
    let revived = false;
    let objectState: ObjectState = 'active';
    if (object) {
      touchObject.run(input.receivedAt, input.orbitJson, objectId);
      objectState = object.state;
      // A notice issued after the retraction brings the object back; an older one arriving late does not.
      if (object.state === 'retracted' && object.retractedAt !== null && input.issuedAt > object.retractedAt) {
        reviveObject.run(objectId);
        objectState = 'active';
        revived = true;
      } else if (object.state === 'retired') {
        reviveObject.run(objectId);
        objectState = 'active';
        revived = true;
      }
    }
    let added = 0;
    for (const obs of input.observations) {
      added += insertObservation.run({ ...obs, heldReason: obs.heldReason ?? null, objectId, noticeRow }).changes;
    }
    markMerged.run(added, noticeRow);
    const queued = objectState === 'active' && (added > 0 || input.orbitJson !== null || revived || !object);
    if (queued) enqueue(objectId, input);
    return { status: 'accepted', noticeRow, objectId, observationsAdded: added, objectState, queued, revived };
  });

  return {
    /**
     * Stores a validated notice and merges it into its object (the sender's
     * designation, or the object a link names), all in one transaction;
     * idempotent on (sender, noticeId). `vet` may refuse it against the
     * object's stored tracklet; a refused notice writes nothing.
     */
    recordNotice(input: NoticeInput, vet?: MergeVetting): RecordNoticeResult {
      return record.immediate(input, vet);
    },
    /** Keeps a rejected payload with every reason. */
    recordRejection(input: RejectionInput): number {
      return Number(
        insertRejection.run(input.source, input.receivedAt, input.sender, input.noticeId, input.raw, JSON.stringify(input.reasons))
          .lastInsertRowid,
      );
    },
    /** True when this sender's designation names an object it has sent observations of, and the service holds positions or an orbit for it. */
    senderKnowsObject(sender: string, designation: string): boolean {
      return senderKnows.get(sender, designation) !== undefined;
    },
    findNotice(sender: string, noticeId: string): NoticeRow | null {
      return (findByKey.get(sender, noticeId) as NoticeRow | undefined) ?? null;
    },
    /** Newest first; `beforeId` is the cursor (the last id of the previous page). */
    listNotices(options: { beforeId?: number; limit: number; objectId?: string }): NoticeRow[] {
      const where: string[] = [];
      const args: (string | number)[] = [];
      if (options.beforeId !== undefined) {
        where.push('id < ?');
        args.push(options.beforeId);
      }
      if (options.objectId !== undefined) {
        where.push('object_id = ?');
        args.push(options.objectId);
      }
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
