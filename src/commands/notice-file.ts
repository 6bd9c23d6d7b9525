import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { observerOf, parseNotice, type Notice } from '../intake/notice.js';
import { decodePayload, depthExceededAt, MAX_JSON_DEPTH } from '../intake/payload.js';
import type { TrackletObservation } from '../domain/tracklet.js';
import { UsageError } from './io.js';

/**
 * Reads a notice file for a command: checked as intake checks it, except for its
 * age (a command computes for whatever times are asked). An unreadable file is a
 * usage error; a file that is not a valid notice comes back with every reason.
 */
export function readNoticeFile(path: string, cwd: string): { ok: true; notice: Notice } | { ok: false; message: string } {
  const full = resolve(cwd, path);
  let bytes: Buffer;
  try {
    bytes = readFileSync(full);
  } catch (err) {
    throw new UsageError(`--notice: cannot read ${full}: ${(err as Error).message}`);
  }
  // Read as intake reads it: UTF-8, with the same depth limit.
  const decoded = decodePayload(bytes);
  if (!decoded.ok) return { ok: false, message: `${full}: ${decoded.issue.message}` };
  const text = decoded.text.replace(/^\uFEFF/, '');
  if (depthExceededAt(text) >= 0) return { ok: false, message: `${full}: JSON nests deeper than ${MAX_JSON_DEPTH} levels; a notice needs 4` };
  let raw: unknown;
  try {
    raw = JSON.parse(text);
  } catch (err) {
    return { ok: false, message: `${full} is not valid JSON: ${(err as Error).message}` };
  }
  if (Array.isArray(raw)) {
    return {
      ok: false,
      message: `${full} holds ${raw.length} notices (a JSON array, as the inbox and POST /v1/notices take them); this command takes a file with one notice object: save the one you want on its own`,
    };
  }
  // The present only matters for the age checks, which commands skip.
  const parsed = parseNotice(raw, { now: new Date(0), checkAge: false });
  if (!parsed.ok) return { ok: false, message: `${full} is not a valid notice:\n${parsed.issues.map((i) => `  ${i.path}: ${i.message}`).join('\n')}` };
  return { ok: true, notice: parsed.notice };
}

/** The notice's observations as estimation takes them, each with its own observer. */
export function trackletOf(notice: Notice): TrackletObservation[] {
  return (notice.observations ?? []).map((o) => {
    const observer = observerOf(notice, o);
    return {
      t: o.t,
      raDeg: o.ra,
      decDeg: o.dec,
      sigmaArcsec: o.sigma,
      mag: o.mag ?? null,
      band: o.band ?? null,
      observer: { latDeg: observer.lat, lonDeg: observer.lon, heightM: observer.height },
    };
  });
}
