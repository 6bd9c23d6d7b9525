/**
 * Small helpers for writing SVG and HTML as strings: escaping, attributes, numbers.
 * Every attribute value and text node passes through `esc`, so data can never become markup.
 */

/** Escapes text for an XML/HTML text node or a double-quoted attribute value. */
export function esc(text: string): string {
  return text.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;').replace(/'/g, '&#39;');
}

export type AttrValue = string | number | boolean | null | undefined;

/**
 * Attribute list ` a="1" b="x"`; null, undefined and false are left out, true writes name="name".
 * Numbers are drawn to 0.01 (pixels), except in data-* attributes, which keep full precision
 * so the numbers a picture carries equal the JSON ones.
 */
export function attrs(values: Record<string, AttrValue>): string {
  let out = '';
  for (const [name, value] of Object.entries(values)) {
    if (value === null || value === undefined || value === false) continue;
    const text = value === true ? name : typeof value === 'number' ? (name.startsWith('data-') ? exact(value) : num(value)) : value;
    out += ` ${name}="${esc(text)}"`;
  }
  return out;
}

/** An element with escaped attributes; `inner` is markup already built (use `esc` for text). */
export function el(name: string, values: Record<string, AttrValue>, inner?: string): string {
  return inner === undefined ? `<${name}${attrs(values)}/>` : `<${name}${attrs(values)}>${inner}</${name}>`;
}

/** A number for drawing: at most `digits` decimals, no trailing zeros, no "-0"; non-finite numbers are refused. */
export function num(x: number, digits = 2): string {
  if (!Number.isFinite(x)) throw new RangeError(`cannot draw the non-finite number ${x}`);
  const s = Number(x.toFixed(digits)).toString();
  return s === '-0' ? '0' : s;
}

function exact(x: number): string {
  if (!Number.isFinite(x)) throw new RangeError(`cannot write the non-finite number ${x}`);
  return String(x);
}

/** Points for a polyline: "x1,y1 x2,y2 ...". */
export function points(xy: readonly (readonly [number, number])[]): string {
  return xy.map(([x, y]) => `${num(x)},${num(y)}`).join(' ');
}

/** HH:MM of a UTC instant. */
export function hhmmUtc(t: Date): string {
  return t.toISOString().slice(11, 16);
}

/** HH:MM of a time in hours [0, 24). */
export function hhmmFromHours(h: number): string {
  const totalMin = Math.round((((h % 24) + 24) % 24) * 60) % 1440;
  return `${String(Math.floor(totalMin / 60)).padStart(2, '0')}:${String(totalMin % 60).padStart(2, '0')}`;
}

/** The SVG root with its accessible title and description first (read by screen readers and shown as tooltips). */
export function svgDocument(options: { widthPx: number; heightPx: number; title: string; desc: string; className: string; body: string; data?: Record<string, AttrValue> }): string {
  const { widthPx, heightPx } = options;
  return (
    `<?xml version="1.0" encoding="UTF-8"?>\n` +
    `<svg${attrs({
      xmlns: 'http://www.w3.org/2000/svg',
      width: widthPx,
      height: heightPx,
      viewBox: `0 0 ${num(widthPx)} ${num(heightPx)}`,
      role: 'img',
      'aria-labelledby': `${options.className}-title ${options.className}-desc`,
      class: options.className,
      'font-family': 'DejaVu Sans, Verdana, sans-serif',
      'font-size': 12,
      ...(options.data ?? {}),
    })}>\n` +
    `${el('title', { id: `${options.className}-title` }, esc(options.title))}\n` +
    `${el('desc', { id: `${options.className}-desc` }, esc(options.desc))}\n` +
    `${el('rect', { x: 0, y: 0, width: widthPx, height: heightPx, fill: '#ffffff' })}\n` +
    options.body +
    `\n</svg>\n`
  );
}

/** Line styles told apart by dash pattern as well as colour (readable in grey print and for colour-blind readers). */
export const SERIES_STYLES: readonly { stroke: string; dash: string | null }[] = [
  { stroke: '#0b5394', dash: null },
  { stroke: '#b45f06', dash: '8 4' },
  { stroke: '#38761d', dash: '2 3' },
  { stroke: '#741b47', dash: '10 3 2 3' },
  { stroke: '#134f5c', dash: '5 5' },
  { stroke: '#7f6000', dash: '1 2 6 2' },
];

export function seriesStyle(index: number): { stroke: string; dash: string | null } {
  return SERIES_STYLES[index % SERIES_STYLES.length]!;
}
