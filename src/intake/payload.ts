import type { ValidationIssue } from '../config/issues.js';

/** One candidate notice cut out of a payload: its verbatim text, and its value or why it could not be read. */
export type PayloadItem =
  | { ok: true; rawText: string; value: unknown }
  | { ok: false; rawText: string; issues: ValidationIssue[] };

export const MAX_PAYLOAD_ITEMS = 10_000;

function stripBom(text: string): string {
  return text.charCodeAt(0) === 0xfeff ? text.slice(1) : text;
}

function parseJson(text: string, where: string): { ok: true; value: unknown } | { ok: false; issues: ValidationIssue[] } {
  try {
    return { ok: true, value: JSON.parse(text) as unknown };
  } catch (err) {
    return { ok: false, issues: [{ path: where, message: `not valid JSON: ${(err as Error).message}` }] };
  }
}

/**
 * Splits a JSON payload (one notice or an array of notices) into items.
 * A single notice keeps its text verbatim; array elements are re-serialised.
 */
export function splitJsonPayload(text: string): PayloadItem[] {
  const body = stripBom(text);
  if (body.trim() === '') return [{ ok: false, rawText: text, issues: [{ path: '(body)', message: 'empty payload' }] }];
  const parsed = parseJson(body, '(body)');
  if (!parsed.ok) return [{ ok: false, rawText: text, issues: parsed.issues }];
  if (!Array.isArray(parsed.value)) return [{ ok: true, rawText: body, value: parsed.value }];
  if (parsed.value.length === 0)
    return [{ ok: false, rawText: text, issues: [{ path: '(body)', message: 'empty array: no notices' }] }];
  if (parsed.value.length > MAX_PAYLOAD_ITEMS)
    return [
      {
        ok: false,
        rawText: text.slice(0, 1_000_000),
        issues: [{ path: '(body)', message: `array of ${parsed.value.length} notices; at most ${MAX_PAYLOAD_ITEMS} per payload` }],
      },
    ];
  return parsed.value.map((value: unknown) => ({ ok: true as const, rawText: JSON.stringify(value) ?? 'null', value }));
}

/** Splits NDJSON: one notice per non-empty line; a bad line is its own rejected item. */
export function splitNdjsonPayload(text: string): PayloadItem[] {
  const lines = stripBom(text)
    .split(/\r?\n/)
    .map((line, index) => ({ line, index }))
    .filter(({ line }) => line.trim() !== '');
  if (lines.length === 0) return [{ ok: false, rawText: text, issues: [{ path: '(body)', message: 'empty payload' }] }];
  if (lines.length > MAX_PAYLOAD_ITEMS)
    return [{ ok: false, rawText: text.slice(0, 1_000_000), issues: [{ path: '(body)', message: `more than ${MAX_PAYLOAD_ITEMS} lines` }] }];
  return lines.map(({ line, index }) => {
    const parsed = parseJson(line, `(line ${index + 1})`);
    return parsed.ok ? { ok: true as const, rawText: line, value: parsed.value } : { ok: false as const, rawText: line, issues: parsed.issues };
  });
}
