/**
 * Text sizes and label placement for the pictures. The server writes SVG without a browser,
 * so a label's width is estimated from the advance widths of DejaVu Sans (the first font the
 * pictures name); the estimate is rounded up so a label drawn in that font, or a close
 * fallback, is never wider than its box. The browser test measures the drawn text and checks
 * that no two labels overlap.
 */

/**
 * Advance widths of DejaVu Sans Book in em, by character class (from the font's metrics
 * table, rounded up to 0.01 em; from memory, so each class takes its widest usual member).
 */
const NARROW = new Set([...'ijlI.,:;!|\'`']);
const SEMI = new Set([...'frt()[]{}-/\\"·′″']);
const WIDE = new Set([...'mwMW%@—']);
const UPPER = /[A-Z]/;

function charEm(ch: string): number {
  if (ch === ' ') return 0.32;
  if (ch === '°') return 0.5;
  if (NARROW.has(ch)) return 0.34;
  if (SEMI.has(ch)) return 0.45;
  if (WIDE.has(ch)) return 1.0;
  if (UPPER.test(ch)) return 0.8;
  if (/[0-9]/.test(ch)) return 0.64;
  if (ch === '×' || ch === '≥' || ch === '≤' || ch === '±' || ch === '→' || ch === '–' || ch === '−' || ch === '+' || ch === '=' || ch === '<' || ch === '>') return 0.84;
  return 0.64;
}

/** Estimated width of `text` in pixels at `fontSizePx` (bold text is taken 10 % wider). */
export function textWidthPx(text: string, fontSizePx: number, bold = false): number {
  let em = 0;
  for (const ch of text) em += charEm(ch);
  return em * fontSizePx * (bold ? 1.1 : 1);
}

/** An axis-aligned box in picture pixels (y down). */
export interface Box {
  x: number;
  y: number;
  w: number;
  h: number;
}

export function boxesOverlap(a: Box, b: Box): boolean {
  return a.x < b.x + b.w && b.x < a.x + a.w && a.y < b.y + b.h && b.y < a.y + a.h;
}

/**
 * The box a text element occupies: from its baseline `y`, an ascent of 0.93 em and a descent of
 * 0.24 em (DejaVu Sans), and across by its anchor.
 */
export function textBox(text: string, x: number, y: number, fontSizePx: number, anchor: 'start' | 'middle' | 'end' = 'start', bold = false): Box {
  const w = textWidthPx(text, fontSizePx, bold);
  const left = anchor === 'start' ? x : anchor === 'middle' ? x - w / 2 : x - w;
  return { x: left, y: y - 0.93 * fontSizePx, w, h: 1.17 * fontSizePx };
}

/** Breaks `text` into lines no wider than `maxWidthPx` at `fontSizePx`, at spaces (a longer word keeps its own line). */
export function wrapText(text: string, maxWidthPx: number, fontSizePx: number, bold = false): string[] {
  const lines: string[] = [];
  let line = '';
  for (const word of text.split(/\s+/).filter((w) => w !== '')) {
    const candidate = line === '' ? word : `${line} ${word}`;
    if (line !== '' && textWidthPx(candidate, fontSizePx, bold) > maxWidthPx) {
      lines.push(line);
      line = word;
    } else line = candidate;
  }
  if (line !== '') lines.push(line);
  return lines;
}

/**
 * The labels placed so far in a picture: a new label takes the first of its candidate
 * positions that overlaps none of them (and stays inside its bounds), or none at all.
 */
export class LabelPlacer {
  private readonly boxes: Box[] = [];

  /** Reserves a box (a label or a drawn thing labels must avoid). */
  reserve(box: Box): void {
    this.boxes.push(box);
  }

  /** True when `box` overlaps nothing reserved, with `padPx` of air around it. */
  isFree(box: Box, padPx = 1): boolean {
    const padded = { x: box.x - padPx, y: box.y - padPx, w: box.w + 2 * padPx, h: box.h + 2 * padPx };
    return !this.boxes.some((b) => boxesOverlap(padded, b));
  }

  /** The first free candidate inside `bounds` (reserved), or null when none is. */
  place(candidates: readonly Box[], bounds?: Box): Box | null {
    for (const c of candidates) {
      if (bounds && (c.x < bounds.x || c.y < bounds.y || c.x + c.w > bounds.x + bounds.w || c.y + c.h > bounds.y + bounds.h)) continue;
      if (this.isFree(c)) {
        this.boxes.push(c);
        return c;
      }
    }
    return null;
  }
}
