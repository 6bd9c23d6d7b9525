import type { ValidationIssue } from '../config/issues.js';
import type { NoticeInput, NoticeStore } from '../store/notices.js';
import { noticeIdentity, observerOf, parseNotice, type Notice } from './notice.js';
import { splitJsonPayload, splitNdjsonPayload, type PayloadItem } from './payload.js';

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
  | { status: 'rejected'; sender: string | null; noticeId: string | null; rejectionId: number; reasons: ValidationIssue[] };

export interface IntakeOptions {
  notices: NoticeStore;
  clock: () => Date;
  futureToleranceMin: number;
  /** Called once per notice with its source (e.g. `inbox:file.json`) and what happened, for metrics. */
  observe?: (source: string, result: IntakeResult) => void;
}

/** How an outcome's positions are taken: per position (in the notice's order), why it is held back, or null. */
export interface FollowUp {
  heldReasons: readonly (string | null)[];
}

/** Flattens a validated notice into the store's input. */
export function toNoticeInput(notice: Notice, raw: string, source: string, receivedAt: Date): NoticeInput {
  const retraction = notice.retracted === true;
  return {
    sender: notice.sender,
    noticeId: notice.noticeId,
    objectId: notice.objectId,
    source,
    receivedAt: receivedAt.toISOString(),
    issuedAt: new Date(notice.issuedAt).toISOString(),
    raw,
    kind: retraction ? 'retraction' : 'observations',
    retractionReason: retraction ? (notice.reason ?? null) : null,
    orbitJson: notice.orbit ? JSON.stringify(notice.orbit) : null,
    observations: (notice.observations ?? []).map((o) => {
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
    }),
  };
}

/**
 * The intake: validates each notice of a payload and stores it (or its
 * rejection with every reason). Nothing is dropped: every item ends as a
 * stored notice, a duplicate of one, or a stored rejection.
 */
export function createIntake(options: IntakeOptions) {
  const { notices, clock } = options;

  function ingestItem(item: PayloadItem, source: string): IntakeResult {
    const result = classify(item, source);
    options.observe?.(source, result);
    return result;
  }

  function classify(item: PayloadItem, source: string, followUp?: FollowUp): IntakeResult {
    const now = clock();
    if (!item.ok) {
      const rejectionId = notices.recordRejection({
        source,
        receivedAt: now.toISOString(),
        sender: null,
        noticeId: null,
        raw: item.rawText,
        reasons: item.issues,
      });
      return { status: 'rejected', sender: null, noticeId: null, rejectionId, reasons: item.issues };
    }
    const parsed = parseNotice(item.value, {
      now,
      checkAge: true,
      futureToleranceMin: options.futureToleranceMin,
      // An update of an object this sender already gave us (or an outcome's positions) needs no new tracklet.
      isUpdate: followUp !== undefined ? () => true : (n) => notices.senderKnowsObject(n.sender, n.objectId),
    });
    if (!parsed.ok) {
      const id = noticeIdentity(item.value);
      const rejectionId = notices.recordRejection({
        source,
        receivedAt: now.toISOString(),
        sender: id.sender,
        noticeId: id.noticeId,
        raw: item.rawText,
        reasons: parsed.issues,
      });
      return { status: 'rejected', sender: id.sender, noticeId: id.noticeId, rejectionId, reasons: parsed.issues };
    }
    const notice = parsed.notice;
    const input = toNoticeInput(notice, item.rawText, source, now);
    if (followUp !== undefined) input.observations = input.observations.map((o, k) => ({ ...o, heldReason: followUp.heldReasons[k] ?? null }));
    const stored = notices.recordNotice(input);
    if (stored.status === 'duplicate') {
      return { status: 'duplicate', sender: notice.sender, noticeId: notice.noticeId, objectId: notice.objectId, sameContent: stored.sameContent };
    }
    return {
      status: 'accepted',
      sender: notice.sender,
      noticeId: notice.noticeId,
      objectId: notice.objectId,
      observationsAdded: stored.observationsAdded,
      objectState: stored.objectState,
      queued: stored.queued,
    };
  }

  return {
    /** One JSON payload: a notice or an array of notices. */
    ingestJson(text: string, source: string): IntakeResult[] {
      return splitJsonPayload(text).map((item) => ingestItem(item, source));
    },
    /** NDJSON: one notice per line. */
    ingestNdjson(text: string, source: string): IntakeResult[] {
      return splitNdjsonPayload(text).map((item) => ingestItem(item, source));
    },
    /**
     * Positions measured at a site for an object the service holds (an outcome's): stored as a
     * notice merged with the tracklet, one position being enough. `heldReasons[k]`, when set,
     * keeps position k out of assessments until an operator confirms it.
     */
    ingestFollowUp(value: unknown, rawText: string, source: string, followUp: FollowUp): IntakeResult {
      const result = classify({ ok: true, rawText, value }, source, followUp);
      options.observe?.(source, result);
      return result;
    },
    /** An already-parsed value (e.g. a fastify body), with its verbatim text when known. */
    ingestValue(value: unknown, rawText: string, source: string): IntakeResult[] {
      if (Array.isArray(value)) {
        if (value.length === 0) return [ingestItem({ ok: false, rawText, issues: [{ path: '(body)', message: 'empty array: no notices' }] }, source)];
        return value.map((v: unknown) => ingestItem({ ok: true, rawText: JSON.stringify(v) ?? 'null', value: v }, source));
      }
      return [ingestItem({ ok: true, rawText, value }, source)];
    },
  };
}

export type Intake = ReturnType<typeof createIntake>;

/** Counts per status, for logs and summaries. */
export function summarise(results: readonly IntakeResult[]): { accepted: number; duplicate: number; rejected: number } {
  const out = { accepted: 0, duplicate: 0, rejected: 0 };
  for (const r of results) out[r.status] += 1;
  return out;
}
