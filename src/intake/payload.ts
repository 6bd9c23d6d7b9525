import type { ValidationIssue } from '../config/issues.js';

/**
 * Cutting a payload (the bytes of an inbox file, a feed answer or a POST body)
 * into candidate notices, with limits: the payload must be UTF-8 (another
 * encoding is named in the refusal), JSON may nest at most MAX_JSON_DEPTH
 * levels, and a payload holds at most MAX_PAYLOAD_ITEMS notices. Nothing here
 * throws: whatever cannot be read becomes a rejected item with its reason.
 */

/** One candidate notice cut out of a payload: its verbatim text, and its value or why it could not be read. */
export type PayloadItem =
  | { ok: true; rawText: string; value: unknown }
  | { ok: false; rawText: string; issues: ValidationIssue[] };

export const MAX_PAYLOAD_ITEMS = 10_000;
/** Deepest JSON nesting read; a notice nests 4 levels (notice, observations, one observation, its observer). */
export const MAX_JSON_DEPTH = 16;
/** Largest payload read from the inbox or a feed, bytes (POST bodies have the smaller `service.bodyLimitBytes`). */
export const MAX_PAYLOAD_BYTES = 32 * 1024 * 1024;
/** Longest raw text kept with a rejection, characters; a longer one is kept cut, and the reason says so. */
export const MAX_KEPT_RAW_CHARS = 4 * 1024 * 1024;

/** The payload as text, or why it is not UTF-8 (with the text as best decoded, to keep). */
export type DecodedPayload = { ok: true; text: string } | { ok: false; text: string; issue: ValidationIssue };

function hex(b: number): string {
  return b.toString(16).toUpperCase().padStart(2, '0');
}

/** The encoding a byte-order mark or a pattern of zero bytes shows, when it is not UTF-8. */
function otherEncoding(bytes: Uint8Array): { name: string; evidence: string; decoder: string | null } | null {
  const [b0, b1, b2, b3] = [bytes[0], bytes[1], bytes[2], bytes[3]];
  if (b0 === 0x00 && b1 === 0x00 && b2 === 0xfe && b3 === 0xff) return { name: 'UTF-32BE', evidence: 'byte-order mark 00 00 FE FF', decoder: null };
  if (b0 === 0xff && b1 === 0xfe && b2 === 0x00 && b3 === 0x00) return { name: 'UTF-32LE', evidence: 'byte-order mark FF FE 00 00', decoder: null };
  if (b0 === 0xff && b1 === 0xfe) return { name: 'UTF-16LE', evidence: 'byte-order mark FF FE', decoder: 'utf-16le' };
  if (b0 === 0xfe && b1 === 0xff) return { name: 'UTF-16BE', evidence: 'byte-order mark FE FF', decoder: 'utf-16be' };
  if (bytes.length >= 4) {
    if (b0 !== 0x00 && b1 === 0x00 && b2 !== 0x00 && b3 === 0x00) return { name: 'UTF-16LE', evidence: 'every second byte zero', decoder: 'utf-16le' };
    if (b0 === 0x00 && b1 !== 0x00 && b2 === 0x00 && b3 !== 0x00) return { name: 'UTF-16BE', evidence: 'every second byte zero', decoder: 'utf-16be' };
  }
  return null;
}

/** Offset of the first byte that is not part of a valid UTF-8 sequence. */
function firstInvalidUtf8(bytes: Uint8Array): number {
  for (let k = 0; k < bytes.length; ) {
    const b = bytes[k]!;
    const need = b < 0x80 ? 0 : b >= 0xc2 && b <= 0xdf ? 1 : b >= 0xe0 && b <= 0xef ? 2 : b >= 0xf0 && b <= 0xf4 ? 3 : -1;
    if (need < 0) return k;
    for (let j = 1; j <= need; j++) if (((bytes[k + j] ?? 0) & 0xc0) !== 0x80) return k;
    k += need + 1;
  }
  return -1;
}

/** Decodes a payload's bytes as UTF-8 (a UTF-8 byte-order mark is dropped); anything else is refused with the encoding named. */
export function decodePayload(bytes: Uint8Array): DecodedPayload {
  const other = otherEncoding(bytes);
  if (other) {
    let text: string;
    try {
      text = other.decoder ? new TextDecoder(other.decoder).decode(bytes) : new TextDecoder('utf-8').decode(bytes);
    } catch {
      text = new TextDecoder('utf-8').decode(bytes);
    }
    return {
      ok: false,
      text,
      issue: { path: '(body)', message: `payload is ${other.name} (${other.evidence}), not UTF-8; re-encode it as UTF-8` },
    };
  }
  try {
    return { ok: true, text: new TextDecoder('utf-8', { fatal: true, ignoreBOM: false }).decode(bytes) };
  } catch {
    const at = firstInvalidUtf8(bytes);
    const shown = at >= 0 ? `byte ${hex(bytes[at]!)} at offset ${at} is not valid UTF-8` : 'invalid UTF-8';
    return {
      ok: false,
      text: new TextDecoder('utf-8').decode(bytes),
      issue: { path: '(body)', message: `payload is not UTF-8 (${shown}; a single-byte encoding such as Latin-1?); re-encode it as UTF-8` },
    };
  }
}

/** The position where JSON text first nests deeper than `maxDepth`, or -1 (strings are skipped; the text need not be valid JSON). */
export function depthExceededAt(text: string, maxDepth = MAX_JSON_DEPTH): number {
  let depth = 0;
  let inString = false;
  for (let k = 0; k < text.length; k++) {
    const c = text.charCodeAt(k);
    if (inString) {
      if (c === 0x5c) k++;
      else if (c === 0x22) inString = false;
    } else if (c === 0x22) inString = true;
    else if (c === 0x5b || c === 0x7b) {
      depth++;
      if (depth > maxDepth) return k;
    } else if (c === 0x5d || c === 0x7d) depth--;
  }
  return -1;
}

function stripBom(text: string): string {
  return text.charCodeAt(0) === 0xfeff ? text.slice(1) : text;
}

/** Parses JSON text within the depth limit; never throws. */
function parseJson(text: string, where: string): { ok: true; value: unknown } | { ok: false; issues: ValidationIssue[] } {
  const deep = depthExceededAt(text);
  if (deep >= 0) return { ok: false, issues: [{ path: where, message: `JSON nests deeper than ${MAX_JSON_DEPTH} levels (at character ${deep}); a notice needs 4` }] };
  try {
    return { ok: true, value: JSON.parse(text) as unknown };
  } catch (err) {
    return { ok: false, issues: [{ path: where, message: `not valid JSON: ${err instanceof Error ? err.message : String(err)}` }] };
  }
}

/** Text kept with a rejection: whole, or cut at MAX_KEPT_RAW_CHARS with an issue saying so. */
export function keptRaw(text: string): { rawText: string; cut: ValidationIssue | null } {
  if (text.length <= MAX_KEPT_RAW_CHARS) return { rawText: text, cut: null };
  return {
    rawText: text.slice(0, MAX_KEPT_RAW_CHARS),
    cut: { path: '(body)', message: `payload of ${text.length} characters; the first ${MAX_KEPT_RAW_CHARS} are kept with this rejection` },
  };
}

function refused(text: string, issues: ValidationIssue[]): PayloadItem[] {
  const kept = keptRaw(text);
  return [{ ok: false, rawText: kept.rawText, issues: kept.cut ? [...issues, kept.cut] : issues }];
}

/** Re-serialises an array element; never throws (the depth limit makes it safe, and a failure is a rejected item). */
function elementItem(value: unknown, index: number): PayloadItem {
  try {
    return { ok: true, rawText: JSON.stringify(value) ?? 'null', value };
  } catch (err) {
    return { ok: false, rawText: '', issues: [{ path: `(body)[${index}]`, message: `could not be kept: ${err instanceof Error ? err.message : String(err)}` }] };
  }
}

/**
 * Splits a JSON payload (one notice or an array of notices) into items.
 * A single notice keeps its text verbatim; array elements are re-serialised.
 */
export function splitJsonPayload(text: string): PayloadItem[] {
  const body = stripBom(text);
  if (body.trim() === '') return refused(text, [{ path: '(body)', message: 'empty payload' }]);
  const parsed = parseJson(body, '(body)');
  if (!parsed.ok) return refused(text, parsed.issues);
  if (!Array.isArray(parsed.value)) return [{ ok: true, rawText: body, value: parsed.value }];
  if (parsed.value.length === 0) return refused(text, [{ path: '(body)', message: 'empty array: no notices' }]);
  if (parsed.value.length > MAX_PAYLOAD_ITEMS)
    return refused(text, [{ path: '(body)', message: `array of ${parsed.value.length} notices; at most ${MAX_PAYLOAD_ITEMS} per payload` }]);
  return parsed.value.map((value: unknown, index: number) => elementItem(value, index));
}

/** Splits NDJSON: one notice per non-empty line; a bad line is its own rejected item. */
export function splitNdjsonPayload(text: string): PayloadItem[] {
  const lines = stripBom(text)
    .split(/\r?\n/)
    .map((line, index) => ({ line, index }))
    .filter(({ line }) => line.trim() !== '');
  if (lines.length === 0) return refused(text, [{ path: '(body)', message: 'empty payload' }]);
  if (lines.length > MAX_PAYLOAD_ITEMS) return refused(text, [{ path: '(body)', message: `${lines.length} lines; at most ${MAX_PAYLOAD_ITEMS} per payload` }]);
  return lines.map(({ line, index }) => {
    const parsed = parseJson(line, `(line ${index + 1})`);
    return parsed.ok ? { ok: true as const, rawText: line, value: parsed.value } : { ok: false as const, rawText: line, issues: parsed.issues };
  });
}

/** True when a payload holds no notice at all (blank, or an empty JSON array): a feed with nothing new says this. */
export function isEmptyPayload(text: string): boolean {
  const body = stripBom(text).trim();
  return body === '' || /^\[\s*\]$/.test(body);
}

/**
 * True when a payload is NDJSON: by its media type, else by its shape (its
 * first non-empty line is a whole JSON value and another line follows), so a
 * pretty-printed single notice stays JSON.
 */
export function looksLikeNdjson(contentType: string | null, text: string): boolean {
  if (contentType?.includes('ndjson') || contentType?.includes('jsonlines')) return true;
  const body = stripBom(text).trimStart();
  if (body.startsWith('[')) return false;
  const end = body.search(/\r?\n/);
  if (end < 0 || body.slice(end).trim() === '') return false;
  const first = body.slice(0, end);
  return parseJson(first, '(line 1)').ok;
}
