import type { Db } from './database.js';
import type { ObjectState, ObservationInput } from './notices.js';

export interface ObjectRow {
  id: string;
  state: ObjectState;
  firstNoticeAt: string;
  lastNoticeAt: string;
  retractionReason: string | null;
  retractedAt: string | null;
  orbit: string | null;
  retiredReason: string | null;
}

/** One observation of a tracklet with its observer, in the estimator's shape. */
export interface TrackletRow {
  t: string;
  raDeg: number;
  decDeg: number;
  sigmaArcsec: number;
  mag: number | null;
  band: string | null;
  observer: { latDeg: number; lonDeg: number; heightM: number };
}

export interface StoredObservation extends ObservationInput {
  id: number;
  noticeRow: number;
  heldReason: string | null;
  confirmedAt: string | null;
  confirmedBy: string | null;
}

export type ConfirmResult =
  | { status: 'confirmed'; observation: StoredObservation }
  | { status: 'not_found' }
  | { status: 'not_held'; observation: StoredObservation };

const OBJECT_COLUMNS = `id, state, first_notice_at AS firstNoticeAt, last_notice_at AS lastNoticeAt,
  retraction_reason AS retractionReason, retracted_at AS retractedAt, orbit, retired_reason AS retiredReason`;

/** Objects and their merged, deduplicated tracklets. */
export function createObjectStore(db: Db) {
  const byId = db.prepare(`SELECT ${OBJECT_COLUMNS} FROM objects WHERE id = ?`);
  const OBSERVATION_COLUMNS = `id, notice_row AS noticeRow, t, ra_deg AS raDeg, dec_deg AS decDeg,
    sigma_arcsec AS sigmaArcsec, mag, band, obs_lat_deg AS obsLatDeg, obs_lon_deg AS obsLonDeg, obs_height_m AS obsHeightM,
    held_reason AS heldReason, confirmed_at AS confirmedAt, confirmed_by AS confirmedBy`;
  const observationsOf = db.prepare(`SELECT ${OBSERVATION_COLUMNS} FROM observations WHERE object_id = ? ORDER BY t, id`);
  const usableOf = db.prepare(`SELECT ${OBSERVATION_COLUMNS} FROM observations WHERE object_id = ? AND (held_reason IS NULL OR confirmed_at IS NOT NULL)
    ORDER BY t, id`);
  const observationById = db.prepare(`SELECT ${OBSERVATION_COLUMNS} FROM observations WHERE object_id = ? AND id = ?`);
  return {
    getObject(id: string): ObjectRow | null {
      return (byId.get(id) as ObjectRow | undefined) ?? null;
    },
    /** Ordered by id; `afterId` is the cursor. */
    listObjects(options: { afterId?: string; limit: number; state?: ObjectState }): ObjectRow[] {
      const where: string[] = [];
      const args: string[] = [];
      if (options.afterId !== undefined) (where.push('id > ?'), args.push(options.afterId));
      if (options.state !== undefined) (where.push('state = ?'), args.push(options.state));
      return db
        .prepare(`SELECT ${OBJECT_COLUMNS} FROM objects ${where.length ? `WHERE ${where.join(' AND ')}` : ''} ORDER BY id LIMIT ?`)
        .all(...args, options.limit) as ObjectRow[];
    },
    /** An active object with no future window anywhere is retired; a new notice brings it back. */
    retire(objectId: string, reason: string): boolean {
      return db.prepare(`UPDATE objects SET state = 'retired', retired_reason = ? WHERE id = ? AND state = 'active'`).run(reason, objectId).changes === 1;
    },
    /** Active objects, for the periodic replan. */
    activeIds(): string[] {
      return (db.prepare(`SELECT id FROM objects WHERE state = 'active' ORDER BY id`).all() as { id: string }[]).map((r) => r.id);
    },
    /**
     * The tracklet in time order as the orbit estimator takes it (degrees, arcsec, metres): every
     * position except those held back (a possible misidentification) and not yet confirmed.
     */
    tracklet(objectId: string): TrackletRow[] {
      return (usableOf.all(objectId) as StoredObservation[]).map((o) => ({
        t: o.t,
        raDeg: o.raDeg,
        decDeg: o.decDeg,
        sigmaArcsec: o.sigmaArcsec,
        mag: o.mag,
        band: o.band,
        observer: { latDeg: o.obsLatDeg, lonDeg: o.obsLonDeg, heightM: o.obsHeightM },
      }));
    },
    /** The object's orbit block (from the latest notice that had one), parsed. */
    orbitBlock(objectId: string): Record<string, unknown> | null {
      const row = byId.get(objectId) as ObjectRow | undefined;
      return row?.orbit ? (JSON.parse(row.orbit) as Record<string, unknown>) : null;
    },
    /** Every stored position of the object in time order, held ones included. */
    observations(objectId: string): StoredObservation[] {
      return observationsOf.all(objectId) as StoredObservation[];
    },
    /** An operator's confirmation of a held position: from now on assessments use it. */
    confirmObservation(objectId: string, observationId: number, by: string, at: Date): ConfirmResult {
      const row = observationById.get(objectId, observationId) as StoredObservation | undefined;
      if (!row) return { status: 'not_found' };
      if (row.heldReason === null || row.confirmedAt !== null) return { status: 'not_held', observation: row };
      db.prepare(`UPDATE observations SET confirmed_at = ?, confirmed_by = ? WHERE id = ?`).run(at.toISOString(), by, observationId);
      return { status: 'confirmed', observation: observationById.get(objectId, observationId) as StoredObservation };
    },
  };
}

export type ObjectStore = ReturnType<typeof createObjectStore>;
