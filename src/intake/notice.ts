import { z } from 'zod';
import { toValidationIssues, type ValidationIssue } from '../config/issues.js';
import type { OrbitBlock } from '../domain/orbit-block.js';
import type { ObservationInput } from '../store/notices.js';
import { DESIGNATION_RULE, identifier, isWellFormedText, NOTICE_ID_RULE, SENDER_RULE } from './identifiers.js';
import { mergedTrackletIssues, sameTimeConflicts, type RulePosition } from './tracklet-rules.js';

/**
 * Notice format v1 (DESIGN.md): the schema, its ranges and the checks that
 * need more than one field (time order, arc length, age against the clock).
 */

export const NOTICE_FORMAT = 'nightjar.notice.v1';
/**
 * Positions in one notice: an intake limit on what one assessment is given
 * (README "Intake limits" gives the reasons; the object-wide limits are in
 * tracklet-rules.ts).
 */
export const MAX_OBSERVATIONS = 100;
export const MIN_OBSERVATIONS = 2;
export const MIN_ARC_MINUTES = 10;
/** Notices with times before this are refused: no survey astrometry of interest is older. */
export const EARLIEST_TIME = '1990-01-01T00:00:00Z';

// eslint-disable-next-line no-control-regex
const CONTROL_CHARS = /[\u0000-\u001f\u007f-\u009f]/;

const text = (max: number) =>
  z
    .string()
    .min(1)
    .max(max)
    .refine(isWellFormedText, 'must be well-formed Unicode (no lone surrogates)')
    .refine((s) => !CONTROL_CHARS.test(s), 'must not contain control characters')
    .refine((s) => s.length === 0 || s.trim().length > 0, 'must not be blank');

const finite = () => z.number().refine(Number.isFinite, 'expected a finite number');

/** ISO-8601 UTC instant with a `Z`, e.g. 2027-03-04T05:06:07.120Z. */
export const isoInstant = () =>
  z.iso.datetime({ offset: false, message: 'expected an ISO-8601 UTC time such as 2027-03-04T05:06:07Z' });

export const noticeObserverSchema = z
  .object({
    lat: finite().min(-90).max(90),
    lon: finite().min(-180).max(180),
    height: finite().min(-500).max(10_000),
  })
  .strict();

/** Photometric bands a notice may report a magnitude in. */
export const NOTICE_BANDS = ['V', 'R', 'B', 'I', 'G', 'g', 'r', 'i', 'z', 'o', 'c', 'w', 'C', 'U'] as const;

export const observationSchema = z
  .object({
    t: isoInstant(),
    ra: finite().min(0).lt(360, 'expected a number < 360'),
    dec: finite().min(-90).max(90),
    /** 1-sigma astrometric uncertainty per axis, arcsec. */
    sigma: finite().gt(0, 'expected a number > 0').max(3600),
    mag: finite().min(-5).max(35).optional(),
    band: z.enum(NOTICE_BANDS).optional(),
    observer: noticeObserverSchema.optional(),
  })
  .strict();

/** Heliocentric ecliptic J2000 elements; angles deg, q au, epoch and tp ISO TT (src/domain/orbit-block.ts). */
export const noticeOrbitSchema = z
  .object({
    epoch: isoInstant(),
    q: finite().gt(0, 'expected a number > 0').max(1000),
    e: finite().min(0).max(50),
    i: finite().min(0).max(180),
    node: finite().min(0).lt(360, 'expected a number < 360'),
    peri: finite().min(0).lt(360, 'expected a number < 360'),
    tp: isoInstant(),
    H: finite().min(-2).max(40).optional(),
    G: finite().min(-0.5).max(1.5).optional(),
  })
  .strict() satisfies z.ZodType<OrbitBlock>;

/** Names another sender's designation as the same object: this notice's designation then joins that object. */
export const noticeLinkSchema = z
  .object({
    sender: identifier(SENDER_RULE),
    objectId: identifier(DESIGNATION_RULE),
  })
  .strict();

export const noticeShape = z
  .object({
    format: z.literal(NOTICE_FORMAT, { message: `expected "${NOTICE_FORMAT}"` }),
    noticeId: identifier(NOTICE_ID_RULE),
    objectId: identifier(DESIGNATION_RULE),
    issuedAt: isoInstant(),
    sender: identifier(SENDER_RULE),
    linkedTo: noticeLinkSchema.optional(),
    observer: noticeObserverSchema,
    observations: z.array(observationSchema).max(MAX_OBSERVATIONS).optional(),
    orbit: noticeOrbitSchema.optional(),
    retracted: z.boolean().optional(),
    reason: text(1000).optional(),
  })
  .strict();

export type NoticeObserver = z.infer<typeof noticeObserverSchema>;
export type NoticeObservation = z.infer<typeof observationSchema>;
export type NoticeOrbit = z.infer<typeof noticeOrbitSchema>;
export type Notice = z.infer<typeof noticeShape>;

export interface ParseNoticeOptions {
  /** The present, for the age checks. */
  now: Date;
  /** Refuse times later than now + futureToleranceMin and earlier than 1990 (intake: yes; ad-hoc CLI: no). */
  checkAge: boolean;
  futureToleranceMin?: number;
  /**
   * Whether the notice updates an object the service already holds (the same sender's
   * designation, or the object of an outcome). An update is merged with the tracklet held, so
   * one position is enough and no arc length is asked; a new object still needs a tracklet.
   */
  isUpdate?: (notice: Notice) => boolean;
}

export type ParseNoticeResult = { ok: true; notice: Notice } | { ok: false; issues: ValidationIssue[] };

/** Positions an update of a known object needs at least: one (follow-up astrometry is often a few frames over minutes). */
export const MIN_UPDATE_OBSERVATIONS = 1;

function crossFieldIssues(notice: Notice, options: ParseNoticeOptions): ValidationIssue[] {
  const issues: ValidationIssue[] = [];
  const observations = notice.observations ?? [];
  const update = notice.retracted !== true && options.isUpdate !== undefined && options.isUpdate(notice);
  if (notice.retracted === true) {
    if (notice.reason === undefined) issues.push({ path: 'reason', message: 'a retraction needs a reason' });
    if (observations.length > 0)
      issues.push({ path: 'observations', message: 'a retraction carries a reason instead of observations' });
  } else {
    if (notice.reason !== undefined)
      issues.push({ path: 'reason', message: 'reason is only allowed together with "retracted": true' });
    // An orbit block alone is enough to compute an ephemeris; without one, a tracklet is needed.
    const orbitOnly = notice.orbit !== undefined && observations.length === 0;
    const needed = update ? MIN_UPDATE_OBSERVATIONS : MIN_OBSERVATIONS;
    if (observations.length < needed && !orbitOnly) {
      issues.push({
        path: 'observations',
        message: update
          ? `an update of a known object needs at least ${MIN_UPDATE_OBSERVATIONS} observation${notice.orbit === undefined ? ' (or an orbit block)' : ''}, got 0`
          : `expected at least ${MIN_OBSERVATIONS} observations${notice.orbit === undefined ? ' (or an orbit block)' : ''}, got ${observations.length}`,
      });
    }
  }
  for (let k = 1; k < observations.length; k++) {
    const prev = Date.parse(observations[k - 1]!.t);
    const cur = Date.parse(observations[k]!.t);
    if (cur < prev) {
      issues.push({ path: `observations[${k}].t`, message: 'observations must be in time order (earlier than the one before)' });
      break;
    }
  }
  if (!update && observations.length >= MIN_OBSERVATIONS) {
    const times = observations.map((o) => Date.parse(o.t));
    const arcMin = (Math.max(...times) - Math.min(...times)) / 60_000;
    if (arcMin < MIN_ARC_MINUTES) {
      issues.push({
        path: 'observations',
        message: `observations span ${arcMin.toFixed(1)} min; at least ${MIN_ARC_MINUTES} min is needed`,
      });
    }
  }
  const positions = rulePositions(notice);
  issues.push(...mergedTrackletIssues([], positions, 'the notice'));
  issues.push(...sameTimeConflicts([], positions, (k) => `observations[${k}]`));
  if (options.checkAge) {
    const latest = options.now.getTime() + (options.futureToleranceMin ?? 5) * 60_000;
    const earliest = Date.parse(EARLIEST_TIME);
    const check = (path: string, iso: string) => {
      const ms = Date.parse(iso);
      if (ms > latest) issues.push({ path, message: `time ${iso} is in the future (now ${options.now.toISOString()})` });
      else if (ms < earliest) issues.push({ path, message: `time ${iso} is before ${EARLIEST_TIME}` });
    };
    check('issuedAt', notice.issuedAt);
    observations.forEach((o, k) => check(`observations[${k}].t`, o.t));
  }
  return issues;
}

/** Validates one parsed JSON value as a notice v1; every problem is returned with its field path. */
export function parseNotice(raw: unknown, options: ParseNoticeOptions): ParseNoticeResult {
  const result = noticeShape.safeParse(raw);
  if (!result.success) return { ok: false, issues: toValidationIssues(result.error) };
  const issues = crossFieldIssues(result.data, options);
  if (issues.length > 0) return { ok: false, issues };
  return { ok: true, notice: result.data };
}

/** Sender and noticeId, when a payload has them as strings (to report a rejection against them). */
export function noticeIdentity(raw: unknown): { sender: string | null; noticeId: string | null; objectId: string | null } {
  const get = (key: string): string | null => {
    if (typeof raw !== 'object' || raw === null || Array.isArray(raw)) return null;
    const value = Object.prototype.hasOwnProperty.call(raw, key) ? (raw as Record<string, unknown>)[key] : undefined;
    return typeof value === 'string' ? value.slice(0, 200) : null;
  };
  return { sender: get('sender'), noticeId: get('noticeId'), objectId: get('objectId') };
}

/** The notice's positions, each with its own observer, as the store keeps them (degrees, arcsec, metres, ISO UTC time); a magnitude without a band is V. */
export function flatObservations(notice: Notice): ObservationInput[] {
  return (notice.observations ?? []).map((o) => {
    const observer = observerOf(notice, o);
    return {
      t: new Date(o.t).toISOString(),
      raDeg: o.ra,
      decDeg: o.dec,
      sigmaArcsec: o.sigma,
      mag: o.mag ?? null,
      band: o.mag !== undefined ? (o.band ?? 'V') : (o.band ?? null),
      obsLatDeg: observer.lat,
      obsLonDeg: observer.lon,
      obsHeightM: observer.height,
    };
  });
}

/** A notice's positions as the tracklet rules see them, each labelled by its index. */
export function rulePositions(notice: Notice): RulePosition[] {
  return flatObservations(notice).map((o, k) => ({ ...o, label: `observations[${k}]` }));
}

/** The observer of one observation: its own override, else the notice's. */
export function observerOf(notice: Notice, observation: NoticeObservation): NoticeObserver {
  return observation.observer ?? notice.observer;
}
