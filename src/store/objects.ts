import { orbitBlockFromJson, type OrbitBlock } from '../domain/orbit-block.js';
import type { TrackletObservation } from '../domain/tracklet.js';
import type { Db } from './database.js';
import type { ObjectState, ObservationInput } from './notices.js';

/** Data read back from the database that no longer fit their type (a changed format, or an edit by hand). */
export class StoredDataError extends Error {
  override readonly name = 'StoredDataError';
}

/** Why an object's last assessment or on-demand estimate failed (null after a success). */
export interface ObjectFailure {
  /** timeout: ran over its time limit; crashed: its worker thread stopped; refused: the numeric modules refused the data; error: it failed otherwise. */
  kind: 'timeout' | 'crashed' | 'refused' | 'error';
  stage: 'assessment' | 'estimate';
  message: string;
  at: string;
  /** The tracklet and orbit block it was computed from (see dataKey): a timeout is not retried on the same data. */
  dataKey: string;
}

export interface ObjectRow {
  /** The object's one id (requests, work, assessments and the API use it): its first sender's designation, with ~N when another object had it. */
  id: string;
  /** The sender and designation that named it first. */
  sender: string;
  designation: string;
  state: ObjectState;
  firstNoticeAt: string;
  lastNoticeAt: string;
  retractionReason: string | null;
  retractedAt: string | null;
  orbit: string | null;
  retiredReason: string | null;
  failure: ObjectFailure | null;
}

/** Another sender's designation that leads to the same object (by an explicit link). */
export interface ObjectName {
  sender: string;
  designation: string;
  namedAt: string;
  link: { sender: string; designation: string } | null;
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

const OBJECT_COLUMNS = `id, sender, designation, state, first_notice_at AS firstNoticeAt, last_notice_at AS lastNoticeAt,
  retraction_reason AS retractionReason, retracted_at AS retractedAt, orbit, retired_reason AS retiredReason, failure`;

type RawObjectRow = Omit<ObjectRow, 'failure'> & { failure: string | null };

function objectRow(raw: RawObjectRow | undefined): ObjectRow | null {
  if (!raw) return null;
  return { ...raw, failure: raw.failure ? (JSON.parse(raw.failure) as ObjectFailure) : null };
}

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
      return objectRow(byId.get(id) as RawObjectRow | undefined);
    },
    /** The object a sender's designation leads to (its own name or a linked one), or null. */
    objectIdFor(sender: string, designation: string): string | null {
      const row = db.prepare(`SELECT object_id AS objectId FROM object_names WHERE sender = ? AND designation = ?`).get(sender, designation) as
        | { objectId: string }
        | undefined;
      return row?.objectId ?? null;
    },
    /** Every sender's designation that leads to the object, oldest first. */
    names(objectId: string): ObjectName[] {
      const rows = db
        .prepare(`SELECT sender, designation, named_at AS namedAt, link FROM object_names WHERE object_id = ? ORDER BY named_at, rowid`)
        .all(objectId) as (Omit<ObjectName, 'link'> & { link: string | null })[];
      return rows.map((r) => ({ ...r, link: r.link ? (JSON.parse(r.link) as ObjectName['link']) : null }));
    },
    /** Records why the object's assessment or estimate failed (shown with the object; a timeout is not retried on the same data). */
    recordFailure(objectId: string, failure: ObjectFailure): void {
      db.prepare(`UPDATE objects SET failure = ? WHERE id = ?`).run(JSON.stringify(failure), objectId);
    },
    /** Clears the failure after a successful assessment. */
    clearFailure(objectId: string): void {
      db.prepare(`UPDATE objects SET failure = NULL WHERE id = ? AND failure IS NOT NULL`).run(objectId);
    },
    /**
     * What an object's estimate is computed from, as a short key: the number of
     * positions, the last one's time and the orbit block. It changes whenever a
     * notice adds positions or an orbit block.
     */
    dataKey(objectId: string): string {
      const row = db.prepare(`SELECT count(*) AS n, max(t) AS last FROM observations WHERE object_id = ?`).get(objectId) as { n: number; last: string | null };
      const orbit = (db.prepare(`SELECT orbit FROM objects WHERE id = ?`).get(objectId) as { orbit: string | null } | undefined)?.orbit ?? null;
      return `${row.n}|${row.last ?? ''}|${orbit ?? ''}`;
    },
    /** Ordered by id; `afterId` is the cursor. */
    listObjects(options: { afterId?: string; limit: number; state?: ObjectState }): ObjectRow[] {
      const where: string[] = [];
      const args: string[] = [];
      if (options.afterId !== undefined) {
        where.push('id > ?');
        args.push(options.afterId);
      }
      if (options.state !== undefined) {
        where.push('state = ?');
        args.push(options.state);
      }
      return (
        db
          .prepare(`SELECT ${OBJECT_COLUMNS} FROM objects ${where.length ? `WHERE ${where.join(' AND ')}` : ''} ORDER BY id LIMIT ?`)
          .all(...args, options.limit) as RawObjectRow[]
      ).map((r) => objectRow(r)!);
    },
    /** An active object with no future window anywhere is retired; a new notice brings it back. */
    retire(objectId: string, reason: string): boolean {
      return db.prepare(`UPDATE objects SET state = 'retired', retired_reason = ? WHERE id = ? AND state = 'active'`).run(reason, objectId).changes === 1;
    },
    /**
     * What the latest assessment says about when the object is usable (ISO UTC; see the
     * planner's usableSpan), and whether it was a first look (its time, else null): the next
     * replan's class and order come from these.
     */
    /** True when the object has an assessment and the latest was not a first look. */
    assessedInFull(objectId: string): boolean {
      return (
        db.prepare(`SELECT 1 FROM objects o WHERE o.id = ? AND o.first_look_at IS NULL AND EXISTS (SELECT 1 FROM assessments a WHERE a.object_id = o.id)`).get(objectId) !==
        undefined
      );
    },
    recordUsable(objectId: string, usable: { from: string | null; until: string | null }, firstLookAt: string | null = null): void {
      db.prepare(`UPDATE objects SET usable_from = ?, usable_until = ?, first_look_at = ? WHERE id = ?`).run(usable.from, usable.until, firstLookAt, objectId);
    },
    /**
     * The tracklet in time order as the orbit estimator takes it (degrees, arcsec, metres): every
     * position except those held back (a possible misidentification) and not yet confirmed.
     */
    tracklet(objectId: string): TrackletObservation[] {
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
    /**
     * The object's orbit block (from the latest notice that had one), checked as it is read back.
     * Throws StoredDataError when the stored text is not an orbit block.
     */
    orbitBlock(objectId: string): OrbitBlock | null {
      const row = byId.get(objectId) as RawObjectRow | undefined;
      if (!row?.orbit) return null;
      const read = orbitBlockFromJson(row.orbit);
      if (!read.ok) throw new StoredDataError(`object ${objectId}: ${read.message}; the next notice with an orbit block for it replaces the stored one`);
      return read.block;
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
