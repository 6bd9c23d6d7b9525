import { z } from 'zod';

/**
 * The identifiers a notice carries: designation (`objectId`), `noticeId` and
 * `sender`. Each is well-formed Unicode from a stated character set and length,
 * so none can carry invisible or direction-changing characters, path segments
 * or bytes that a database or a file name would mangle. README "Notice format"
 * states the same rules.
 */

export interface IdentifierRule {
  /** Longest value, in characters. */
  readonly maxLength: number;
  /** The rule in words, as the refusal quotes it. */
  readonly rule: string;
  /** One allowed character. */
  readonly char: RegExp;
  /** Allowed first (and, where `edge` says, last) character. */
  readonly edge: RegExp;
  /** Whether the last character must match `edge` too. */
  readonly lastIsEdge: boolean;
  /** Unicode normal form C required (only where letters beyond ASCII are allowed). */
  readonly nfc: boolean;
}

export const DESIGNATION_RULE: IdentifierRule = {
  maxLength: 64,
  rule: '1-64 characters from A-Z a-z 0-9 space . _ : -, beginning and ending with a letter or digit, without ".."',
  char: /^[A-Za-z0-9 ._:-]$/u,
  edge: /^[A-Za-z0-9]$/u,
  lastIsEdge: true,
  nfc: false,
};

export const NOTICE_ID_RULE: IdentifierRule = {
  maxLength: 128,
  rule: '1-128 characters from A-Z a-z 0-9 space . _ : / -, beginning and ending with a letter or digit, without ".."',
  char: /^[A-Za-z0-9 ._:/-]$/u,
  edge: /^[A-Za-z0-9]$/u,
  lastIsEdge: true,
  nfc: false,
};

export const SENDER_RULE: IdentifierRule = {
  maxLength: 200,
  rule: "1-200 characters: letters and digits (any script, Unicode normal form C), space and . _ : / - ( ) , ' & +, beginning with a letter or digit, without \"..\"",
  char: /^[\p{L}\p{M}\p{Nd} ._:/\-(),'&+]$/u,
  edge: /^[\p{L}\p{Nd}]$/u,
  lastIsEdge: false,
  nfc: true,
};

const LONE_SURROGATE = /[\uD800-\uDFFF]/u;

function codePoint(ch: string): string {
  return `U+${ch.codePointAt(0)!.toString(16).toUpperCase().padStart(4, '0')}`;
}

/** Why `value` breaks `rule`, or null when it is well-formed. */
export function identifierProblem(value: string, rule: IdentifierRule): string | null {
  const lone = LONE_SURROGATE.exec(value);
  if (lone) return `is not well-formed Unicode (a lone surrogate ${codePoint(lone[0])} at position ${lone.index}); expected ${rule.rule}`;
  const chars = [...value];
  if (chars.length === 0) return `is empty; expected ${rule.rule}`;
  if (chars.length > rule.maxLength) return `has ${chars.length} characters; expected ${rule.rule}`;
  if (value.includes('..')) return `contains ".."; expected ${rule.rule}`;
  for (let k = 0; k < chars.length; k++) {
    const ch = chars[k]!;
    if (!rule.char.test(ch)) return `contains ${codePoint(ch)} at position ${k}, which is not allowed; expected ${rule.rule}`;
  }
  if (!rule.edge.test(chars[0]!)) return `begins with "${chars[0]}"; expected ${rule.rule}`;
  if (rule.lastIsEdge && !rule.edge.test(chars[chars.length - 1]!)) return `ends with "${chars[chars.length - 1]}"; expected ${rule.rule}`;
  if (rule.nfc && value.normalize('NFC') !== value) return `is not in Unicode normal form C; expected ${rule.rule}`;
  return null;
}

/** A zod string checked against `rule`; the issue message is the rule's refusal. */
export function identifier(rule: IdentifierRule) {
  return z.string().superRefine((value, ctx) => {
    const problem = identifierProblem(value, rule);
    if (problem !== null) ctx.addIssue({ code: 'custom', message: problem });
  });
}

/** True when `text` holds no lone surrogate (it can be stored as UTF-8 and read back unchanged). */
export function isWellFormedText(text: string): boolean {
  return !LONE_SURROGATE.test(text);
}
