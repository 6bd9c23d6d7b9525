import type { ValidationIssue } from '../config/issues.js';
import type { MergeVetting, NoticeInput, NoticeStore } from '../store/notices.js';
import { flatObservations, noticeIdentity, parseNotice, rulePositions, type Notice } from './notice.js';
import { decodePayload, keptRaw, splitJsonPayload, splitNdjsonPayload, type PayloadItem } from './payload.js';
import { mergedTrackletIssues, sameTimeConflicts, type RulePosition } from './tracklet-rules.js';
import { newDataAllowanceS, trackletRateDegPerDay } from './urgency.js';

/** What happened to one notice of a payload. */
export type IntakeResult =
  | {
      status: 'accepted';
      sender: string;
      noticeId: string;
      objectId: string;
      observationsAdded: number;
      objectState: string;
      queued: boolean;
    }
  | { status: 'duplicate'; sender: string; noticeId: string; objectId: string; sameContent: boolean }
  // objectId: the id of the object row the notice merged into (its designation, or designation~N when another sender used it first; see README)
  | { status: 'rejected'; sender: string | null; noticeId: string | null; rejectionId: number; reasons: ValidationIssue[] };

export interface IntakeOptions {
  notices: NoticeStore;
  clock: () => Date;
  futureToleranceMin: number;
  /** Called once per notice with its source (e.g. `inbox:file.json`) and what happened, for metrics. */
  observe?: (source: string, result: IntakeResult) => void;
}

/** How an outcome's positions are taken: into which object, and per position (in the notice's order) why it is held back, or null. */
export interface FollowUp {
  /** The request's object: the positions are merged into it whatever other senders call it. */
  objectId: string;
  heldReasons: readonly (string | null)[];
}

/** Flattens a validated notice into the store's input. */
export function toNoticeInput(notice: Notice, raw: string, source: string, receivedAt: Date): NoticeInput {
  const retraction = notice.retracted === true;
  const positions = (notice.observations ?? []).map((o) => ({ t: o.t, raDeg: o.ra, decDeg: o.dec }));
  // A retraction is wanted at once (its queued requests are withdrawn); new positions by their rate.
  const allowanceS = retraction ? 0 : newDataAllowanceS(trackletRateDegPerDay(positions));
  return {
    dueAt: new Date(receivedAt.getTime() + allowanceS * 1000).toISOString(),
    sender: notice.sender,
    noticeId: notice.noticeId,
    objectId: notice.objectId,
    link: notice.linkedTo ? { sender: notice.linkedTo.sender, designation: notice.linkedTo.objectId } : null,
    source,
    receivedAt: receivedAt.toISOString(),
    issuedAt: new Date(notice.issuedAt).toISOString(),
    raw,
    kind: retraction ? 'retraction' : 'observations',
    retractionReason: retraction ? (notice.reason ?? null) : null,
    orbitJson: notice.orbit ? JSON.stringify(notice.orbit) : null,
    observations: flatObservations(notice),
  };
}

/**
 * The intake: validates each notice of a payload and stores it (or its
 * rejection with every reason). Nothing is dropped: every item ends as a
 * stored notice, a duplicate of one, or a stored rejection.
 */
export function createIntake(options: IntakeOptions) {
  const { notices, clock } = options;

  function ingestItem(item: PayloadItem, source: string, followUp: FollowUp | null = null): IntakeResult {
    const result = classify(item, source, followUp);
    options.observe?.(source, result);
    return result;
  }

  function reject(source: string, now: Date, who: { sender: string | null; noticeId: string | null }, rawText: string, issues: ValidationIssue[]): IntakeResult {
    const reasons = capIssues(issues);
    const rejectionId = notices.recordRejection({ source, receivedAt: now.toISOString(), sender: who.sender, noticeId: who.noticeId, raw: rawText, reasons });
    return { status: 'rejected', sender: who.sender, noticeId: who.noticeId, rejectionId, reasons };
  }

  function classify(item: PayloadItem, source: string, followUp: FollowUp | null): IntakeResult {
    const now = clock();
    if (!item.ok) return reject(source, now, { sender: null, noticeId: null }, item.rawText, item.issues);
    const parsed = parseNotice(item.value, {
      now,
      checkAge: true,
      futureToleranceMin: options.futureToleranceMin,
      // An update of an object this sender already gave us (or an outcome's positions) needs no new tracklet.
      isUpdate: followUp !== null ? () => true : (n) => notices.senderKnowsObject(n.sender, n.objectId),
    });
    if (!parsed.ok) return reject(source, now, identityOf(item.value), item.rawText, parsed.issues);
    const notice = parsed.notice;
    const input = { ...toNoticeInput(notice, item.rawText, source, now), intoObject: followUp?.objectId ?? null };
    if (followUp !== null) input.observations = input.observations.map((o, k) => ({ ...o, heldReason: followUp.heldReasons[k] ?? null }));
    let stored;
    try {
      stored = notices.recordNotice(input, vetMerge(notice));
    } catch (err) {
      // A notice that cannot be stored is kept as a rejection with the reason, never lost.
      return reject(source, now, notice, item.rawText, [{ path: '(store)', message: `could not be stored: ${err instanceof Error ? err.message : String(err)}` }]);
    }
    if (stored.status === 'refused') return reject(source, now, notice, item.rawText, stored.issues);
    if (stored.status === 'duplicate') {
      return { status: 'duplicate', sender: notice.sender, noticeId: notice.noticeId, objectId: stored.objectId, sameContent: stored.sameContent };
    }
    return {
      status: 'accepted',
      sender: notice.sender,
      noticeId: notice.noticeId,
      objectId: stored.objectId,
      observationsAdded: stored.observationsAdded,
      objectState: stored.objectState,
      queued: stored.queued,
    };
  }

  /** Splits a payload (bytes are decoded as UTF-8 first) and ingests every item. */
  function ingestPayload(payload: string | Uint8Array, source: string, split: (text: string) => PayloadItem[]): IntakeResult[] {
    let text: string;
    if (typeof payload === 'string') text = payload;
    else {
      const decoded = decodePayload(payload);
      if (!decoded.ok) {
        const kept = keptRaw(decoded.text);
        return [ingestItem({ ok: false, rawText: kept.rawText, issues: kept.cut ? [decoded.issue, kept.cut] : [decoded.issue] }, source)];
      }
      text = decoded.text;
    }
    return split(text).map((item) => ingestItem(item, source));
  }

  return {
    /** One JSON payload: a notice or an array of notices (bytes must be UTF-8). */
    ingestJson(payload: string | Uint8Array, source: string): IntakeResult[] {
      return ingestPayload(payload, source, splitJsonPayload);
    },
    /** NDJSON: one notice per line (bytes must be UTF-8). */
    ingestNdjson(payload: string | Uint8Array, source: string): IntakeResult[] {
      return ingestPayload(payload, source, splitNdjsonPayload);
    },
    /** A payload refused before it could be split (e.g. too large to read): kept as a rejection with `issues`. */
    refuse(rawText: string, issues: ValidationIssue[], source: string): IntakeResult {
      return ingestItem({ ok: false, rawText, issues }, source);
    },
    /**
     * Positions measured at a site for an object the service holds (an outcome's): stored as a
     * notice merged with the request's object (`followUp.objectId`, whatever other senders call
     * it), one position being enough. `heldReasons[k]`, when set, keeps position k out of
     * assessments until an operator confirms it.
     */
    ingestFollowUp(value: unknown, rawText: string, source: string, followUp: FollowUp): IntakeResult {
      return ingestItem({ ok: true, rawText, value }, source, followUp);
    },
  };
}

export type Intake = ReturnType<typeof createIntake>;

/** Most reasons kept per rejection: a payload with many bad fields keeps the first ones and a count of the rest. */
export const MAX_REASONS = 50;

function capIssues(issues: readonly ValidationIssue[]): ValidationIssue[] {
  if (issues.length <= MAX_REASONS) return [...issues];
  return [...issues.slice(0, MAX_REASONS), { path: '(more)', message: `${issues.length - MAX_REASONS} more problems not listed` }];
}

function identityOf(value: unknown): { sender: string | null; noticeId: string | null } {
  const id = noticeIdentity(value);
  return { sender: id.sender, noticeId: id.noticeId };
}

function storedPosition(o: { t: string; raDeg: number; decDeg: number; sigmaArcsec: number; obsLatDeg: number; obsLonDeg: number; obsHeightM: number; noticeRow: number }): RulePosition {
  return { ...o, label: `the stored position at ${o.t} (notice row ${o.noticeRow})` };
}

/** The rules a notice must keep against the object it merges into: the merged tracklet's limits and no same-time conflict with a stored position. */
function vetMerge(notice: Notice): MergeVetting {
  return (stored, objectId, isNew) => {
    if (isNew || (notice.observations ?? []).length === 0) return [];
    const incoming = rulePositions(notice);
    const earlier = stored.map(storedPosition);
    return [...mergedTrackletIssues(earlier, incoming, `object ${objectId}`), ...sameTimeConflicts(earlier, incoming, (k) => `observations[${k}]`)];
  };
}

/** Counts per status, for logs and summaries. */
export function summarise(results: readonly IntakeResult[]): { accepted: number; duplicate: number; rejected: number } {
  const out = { accepted: 0, duplicate: 0, rejected: 0 };
  for (const r of results) out[r.status] += 1;
  return out;
}
