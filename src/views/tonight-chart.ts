import type { Site } from '../config/schema.js';
import { requiredMoonSeparationDeg } from '../sky/limits.js';
import type { Night } from '../sky/night.js';
import { altitudeForAirmassDeg } from '../sky/site.js';
import { skyAt } from '../sky/timeline.js';
import { LabelPlacer, textBox, textWidthPx, wrapText, type Box } from './layout.js';
import { localClock } from './local-time.js';
import { el, esc, hhmmUtc, num, points, svgDocument } from './markup.js';
import { durationWords, KIND_WORDS } from './words.js';

/**
 * Tonight at one site as a timeline: one row per object with open requests, best score first;
 * time runs across in UTC with the site's local clock beside it. Each row shows the object's
 * observable windows as bars (the line inside a bar is the object's altitude) and, one lane
 * per request, the request's window as a thin line with its recommended start and expected
 * duration as a block. The limit that closes a window is written at its end. Day, twilight,
 * dark and moonlit time are bands behind the rows; the site's hard limits and horizon mask are
 * listed beside. Sun and Moon times come from the sky module (astronomy-engine); windows,
 * requests and altitudes are given by the caller.
 */

const MS_PER_MIN = 60_000;
const MS_PER_HOUR = 3_600_000;
/** Margin drawn before sunset and after sunrise, minutes. */
const EDGE_MARGIN_MIN = 30;

export interface TonightWindow {
  startUtc: Date;
  endUtc: Date;
  opensBecause: string;
  closesBecause: string;
}

export interface TonightRequest {
  requestId: string;
  kind: string;
  state: string;
  score: number;
  windowStartUtc: Date;
  windowEndUtc: Date;
  recommendedStartUtc: Date;
  /** Expected duration of the request's sequence, s. */
  durationS: number;
  /** Why the request's own window closes (it may close before the sky window, e.g. too faint). */
  closesBecause: string | null;
}

export interface TonightObject {
  objectId: string;
  /** The observable windows at the site (sky module); empty when unknown (the request windows stand in). */
  windows: TonightWindow[];
  requests: TonightRequest[];
  /** Apparent altitude, degrees, in time order; may cover only the request windows. */
  altitude: { t: Date; altDeg: number }[];
  /** Where the altitudes came from: 'estimate' (the on-demand orbit estimate) or 'request-table'. */
  altitudeSource: 'estimate' | 'request-table';
}

export type SkyBandKind = 'day' | 'twilight' | 'dark' | 'moonlit';

export interface SkyBand {
  kind: SkyBandKind;
  start: Date;
  end: Date;
}

export interface TonightRow extends TonightObject {
  rank: number;
  bestScore: number;
}

export interface TonightChart {
  site: Site;
  night: Night;
  startUtc: Date;
  endUtc: Date;
  bands: SkyBand[];
  rows: TonightRow[];
  /** The lowest altitude any limit allows (larger of minAltitudeDeg and the altitude of maxAirmass), deg: a window bar's bottom. */
  floorAltDeg: number;
  now: Date | null;
}

/**
 * The span the timeline covers for a night: sunset minus 30 min to sunrise plus 30 min, or the
 * night's whole search span (local noon to noon) when the Sun does not set or rise.
 */
export function tonightSpan(night: Night): { startUtc: Date; endUtc: Date } {
  const startUtc = night.sunset ? new Date(night.sunset.getTime() - EDGE_MARGIN_MIN * MS_PER_MIN) : night.span.start;
  const endUtc = night.sunrise ? new Date(night.sunrise.getTime() + EDGE_MARGIN_MIN * MS_PER_MIN) : night.span.end;
  return { startUtc, endUtc };
}

/** Sample times across [startUtc, endUtc] every `stepMin` minutes, the end included. */
export function sampleTimes(startUtc: Date, endUtc: Date, stepMin = 10): Date[] {
  const out: Date[] = [];
  for (let t = startUtc.getTime(); t < endUtc.getTime(); t += stepMin * MS_PER_MIN) out.push(new Date(t));
  out.push(endUtc);
  return out;
}

/**
 * The sky's state across [startUtc, endUtc] as consecutive bands: day before sunset and after
 * sunrise, twilight between sunset and dusk and between dawn and sunrise (dusk and dawn at the
 * site's night Sun altitude), dark time with the Moon below the horizon, and moonlit dark time
 * (the Moon above the horizon; the sky module's rise and set times). Without a sunset or
 * sunrise in the span, the Sun's altitude at the span's start decides day or twilight.
 */
export function skyBands(site: Site, night: Night, startUtc: Date, endUtc: Date): SkyBand[] {
  const cuts: { t: Date; kind: SkyBandKind }[] = [];
  const startKind: SkyBandKind =
    night.sunset !== null && night.sunset > startUtc ? 'day' : night.dark !== null && night.dark.start <= startUtc ? 'dark' : skyAt(site, startUtc).sun.altDeg > 0 ? 'day' : 'twilight';
  cuts.push({ t: startUtc, kind: startKind });
  if (night.sunset) cuts.push({ t: night.sunset, kind: 'twilight' });
  if (night.dark) {
    cuts.push({ t: night.dark.start, kind: 'dark' });
    for (const up of night.moon.upDuringDark) {
      cuts.push({ t: up.start, kind: 'moonlit' });
      cuts.push({ t: up.end, kind: 'dark' });
    }
    cuts.push({ t: night.dark.end, kind: 'twilight' });
  }
  if (night.sunrise) cuts.push({ t: night.sunrise, kind: 'day' });
  const inSpan = cuts.filter((c) => c.t >= startUtc && c.t < endUtc).sort((a, b) => a.t.getTime() - b.t.getTime());
  const bands: SkyBand[] = [];
  inSpan.forEach((c, i) => {
    const end = inSpan[i + 1]?.t ?? endUtc;
    if (end.getTime() <= c.t.getTime()) return;
    const last = bands[bands.length - 1];
    if (last && last.kind === c.kind) last.end = end;
    else bands.push({ kind: c.kind, start: c.t, end });
  });
  return bands;
}

/** Merges overlapping request windows into windows, each closing for the reason of the request that ends last. */
function windowsFromRequests(requests: readonly TonightRequest[]): TonightWindow[] {
  const sorted = [...requests].sort((a, b) => a.windowStartUtc.getTime() - b.windowStartUtc.getTime());
  const out: TonightWindow[] = [];
  for (const r of sorted) {
    const last = out[out.length - 1];
    if (last && r.windowStartUtc <= last.endUtc) {
      if (r.windowEndUtc > last.endUtc) {
        last.endUtc = r.windowEndUtc;
        last.closesBecause = r.closesBecause ?? 'request window ends';
      }
    } else out.push({ startUtc: r.windowStartUtc, endUtc: r.windowEndUtc, opensBecause: 'request window opens', closesBecause: r.closesBecause ?? 'request window ends' });
  }
  return out;
}

/** The timeline's data: rows ranked by their best request score (ties: earlier first window, then designation). */
export function buildTonightChart(input: { site: Site; night: Night; objects: TonightObject[]; now?: Date }): TonightChart {
  const { site, night } = input;
  const { startUtc, endUtc } = tonightSpan(night);
  const airmassAlt = site.limits.maxAirmass !== undefined ? altitudeForAirmassDeg(site.limits.maxAirmass) : -Infinity;
  const floorAltDeg = Math.max(site.limits.minAltitudeDeg, airmassAlt);
  const inSpan = (a: Date, b: Date) => b > startUtc && a < endUtc;
  const prepared = input.objects.map((o) => {
    const windows = (o.windows.length > 0 ? o.windows : windowsFromRequests(o.requests)).filter((w) => inSpan(w.startUtc, w.endUtc));
    const requests = o.requests.filter((r) => inSpan(r.windowStartUtc, r.windowEndUtc)).sort((a, b) => b.score - a.score || a.recommendedStartUtc.getTime() - b.recommendedStartUtc.getTime());
    const bestScore = requests.reduce((m, r) => Math.max(m, r.score), -Infinity);
    const firstMs = Math.min(...windows.map((w) => w.startUtc.getTime()), ...requests.map((r) => r.windowStartUtc.getTime()));
    return { ...o, windows, requests, bestScore, firstMs };
  });
  prepared.sort((a, b) => b.bestScore - a.bestScore || a.firstMs - b.firstMs || a.objectId.localeCompare(b.objectId));
  const now = input.now && input.now >= startUtc && input.now <= endUtc ? input.now : null;
  return {
    site,
    night,
    startUtc,
    endUtc,
    bands: skyBands(site, night, startUtc, endUtc),
    rows: prepared.map(({ firstMs: _f, ...row }, i) => ({ ...row, rank: i + 1 })),
    floorAltDeg,
    now,
  };
}

/**
 * A short name for the limit that closes a window, from the sky module's edge words
 * (src/sky/windows.ts) or the planner's (too faint); the full words go in the tooltip.
 */
export function closingWords(detail: string): string {
  const rules: [RegExp, (m: RegExpExecArray) => string][] = [
    [/^dawn/, () => 'dawn'],
    [/^altitude falls below ([\d.]+) deg/, (m) => `altitude ${m[1]}°`],
    [/horizon mask/, () => 'horizon mask'],
    [/^airmass rises above ([\d.]+)/, (m) => `airmass ${m[1]}`],
    [/^hour angle passes ([-+\d.]+) h/, (m) => `hour angle ${m[1]} h`],
    [/zenith keep-out/, () => 'zenith keep-out'],
    [/^declination leaves/, () => 'declination limit'],
    [/^Moon separation/, () => 'Moon too close'],
    [/^Sun separation/, () => 'Sun too close'],
    [/^rate exceeds ([\d.]+)/, (m) => `rate ${m[1]}″/s`],
    [/too faint/, () => 'too faint'],
    [/end of the requested interval/, () => 'planning horizon ends'],
  ];
  for (const [re, words] of rules) {
    const m = re.exec(detail);
    if (m) return words(m);
  }
  return detail.length > 24 ? `${detail.slice(0, 23)}…` : detail;
}

const BAND_STYLE: Record<SkyBandKind, { fill: string; words: string }> = {
  day: { fill: '#fbf7ec', words: 'day' },
  twilight: { fill: '#dfe6ef', words: 'twilight' },
  dark: { fill: '#c3cede', words: 'dark' },
  moonlit: { fill: '#ece2bd', words: 'moonlit' },
};

const WIDTH = 1260;
const LEFT_X = 12;
const X0 = 256;
const X1 = 896;
/** Closing labels may run past the plot's right edge up to here. */
const END_ROOM_X = 1016;
const SIDE_X = 1030;
const SIDE_W = 218;
const FONT = 11;
const ROW_HEAD = 24;
const LANE = 16;
const ROW_GAP = 8;

const hm = (t: Date) => hhmmUtc(t);
/** A pale box behind text drawn over lines and bands, so nothing runs through it. */
const backdrop = (box: Box) => el('rect', { x: box.x - 1, y: box.y, width: box.w + 2, height: box.h, fill: '#ffffff', 'fill-opacity': 0.85 });

/** Renders the timeline as a standalone SVG document. */
export function renderTonightChart(chart: TonightChart): string {
  const { site, night, startUtc, endUtc } = chart;
  const clock = localClock(site, night.dark?.start ?? startUtc);
  const t0 = startUtc.getTime();
  const spanMs = endUtc.getTime() - t0;
  const x = (t: Date) => X0 + ((Math.min(endUtc.getTime(), Math.max(t0, t.getTime())) - t0) / spanMs) * (X1 - X0);
  const placer = new LabelPlacer();
  const parts: string[] = [];
  const footnotes: string[] = [];

  /** A text element whose box is reserved; returns '' when `force` is false and it would overlap. */
  const text = (content: string, at: { x: number; y: number }, options: { size?: number; anchor?: 'start' | 'middle' | 'end'; bold?: boolean; attrs?: Record<string, string | number>; bounds?: Box; backdrop?: boolean } = {}) => {
    const size = options.size ?? FONT;
    const box = textBox(content, at.x, at.y, size, options.anchor ?? 'start', options.bold ?? false);
    if (!placer.place([box], options.bounds)) return '';
    return (options.backdrop ? backdrop(box) : '') + el(
      'text',
      { x: at.x, y: at.y, 'font-size': size, 'text-anchor': options.anchor && options.anchor !== 'start' ? options.anchor : null, 'font-weight': options.bold ? 'bold' : null, ...options.attrs },
      esc(content),
    );
  };

  // Title and the night in one line.
  parts.push(text(`Tonight at ${site.name}: the night of ${night.localDate}`, { x: LEFT_X, y: 24 }, { size: 16, bold: true }));
  const illum = Math.round(night.moon.illuminatedFraction * 100);
  const moonUp = night.moon.upDuringDark.map((i) => `${hm(i.start)}–${hm(i.end)}`).join(', ');
  const nightLine = [
    night.sunset ? `sunset ${hm(night.sunset)}` : 'no sunset',
    night.dark ? `dark ${hm(night.dark.start)}–${hm(night.dark.end)} (Sun below ${num(night.nightSunAltitudeDeg, 1)}°)` : 'no dark time',
    night.sunrise ? `sunrise ${hm(night.sunrise)} UTC` : 'no sunrise',
    `Moon ${illum} % lit${night.dark ? (moonUp ? `, up in the dark ${moonUp}` : ', down all dark time') : ''}`,
  ].join(' · ');
  parts.push(text(nightLine, { x: LEFT_X, y: 44 }, { size: 12 }));

  // Time axis: UTC and the local clock at each tick.
  const pxPerHour = (X1 - X0) / (spanMs / MS_PER_HOUR);
  const stepH = pxPerHour >= 44 ? 1 : pxPerHour >= 22 ? 2 : 3;
  const AXIS_UTC_Y = 84;
  const AXIS_LOCAL_Y = 99;
  const STRIP_TOP = 106;
  const STRIP_H = 18;
  const ROWS_TOP = STRIP_TOP + STRIP_H + 8;
  parts.push(text('UTC', { x: X0 - 10, y: AXIS_UTC_Y }, { anchor: 'end', bold: true }));
  parts.push(text(clock.label, { x: X0 - 10, y: AXIS_LOCAL_Y }, { anchor: 'end', attrs: { fill: '#444', class: 'local-clock' } }));
  const ticks: Date[] = [];
  for (let t = Math.ceil(t0 / (stepH * MS_PER_HOUR)) * stepH * MS_PER_HOUR; t <= endUtc.getTime(); t += stepH * MS_PER_HOUR) ticks.push(new Date(t));

  // Rows first (their height sets the picture's), drawn after the bands.
  const rowParts: string[] = [];
  let y = ROWS_TOP;
  const laneBounds: Box = { x: X0, y: 0, w: END_ROOM_X - X0, h: 1e6 };
  for (const row of chart.rows) {
    const top = y;
    const height = ROW_HEAD + LANE * row.requests.length + ROW_GAP;
    const barTop = top + 5;
    const barH = 14;
    const inner: string[] = [];
    inner.push(text(row.objectId, { x: LEFT_X, y: top + 17 }, { size: 13, bold: true, attrs: { class: 'object-name' } }));
    const inWindows = row.altitude.filter((p) => row.windows.some((w) => p.t >= w.startUtc && p.t <= w.endUtc));
    const rowPeak = inWindows.length > 0 ? inWindows.reduce((p, q) => (q.altDeg > p.altDeg ? q : p)) : null;
    const headWords = [rowPeak ? `peak ${Math.round(rowPeak.altDeg)}°` : null, Number.isFinite(row.bestScore) ? `best ${num(row.bestScore, 1)}` : null].filter((w) => w !== null).join(' · ');
    if (headWords !== '') inner.push(text(headWords, { x: X0 - 10, y: top + 17 }, { anchor: 'end', attrs: { fill: '#333', class: 'row-summary' } }));

    // Window bars with the altitude inside.
    row.windows.forEach((w, k) => {
      const a = x(w.startUtc);
      const b = Math.max(x(w.endUtc), a + 1);
      const closes = closingWords(w.closesBecause);
      inner.push(
        el(
          'g',
          { class: 'window', 'data-start': w.startUtc.toISOString(), 'data-end': w.endUtc.toISOString(), 'data-closes': w.closesBecause, 'data-opens': w.opensBecause },
          el('title', {}, esc(`${row.objectId} observable ${hm(w.startUtc)}–${hm(w.endUtc)} UTC; opens: ${w.opensBecause}; closes: ${w.closesBecause}`)) +
            el('rect', { x: a, y: barTop, width: b - a, height: barH, fill: '#ffffff', 'fill-opacity': 0.9, stroke: '#2f3e55', 'stroke-width': 1 }),
        ),
      );
      const samples = row.altitude.filter((p) => p.t >= w.startUtc && p.t <= w.endUtc);
      if (samples.length >= 2) {
        const yAlt = (alt: number) => barTop + barH - 1 - ((Math.min(90, Math.max(chart.floorAltDeg, alt)) - chart.floorAltDeg) / (90 - chart.floorAltDeg)) * (barH - 2);
        const peak = samples.reduce((p, q) => (q.altDeg > p.altDeg ? q : p));
        const line = samples.map((p) => [x(p.t), yAlt(p.altDeg)] as const);
        const first = line[0]!;
        const last = line[line.length - 1]!;
        // The area under the altitude line, shaded, and the line over it.
        inner.push(el('polygon', { points: points([[first[0], barTop + barH], ...line, [last[0], barTop + barH]]), fill: '#9fb4d8', 'fill-opacity': 0.7, stroke: 'none' }));
        inner.push(
          el('polyline', {
            class: 'altitude',
            'data-peak-alt-deg': peak.altDeg,
            'data-peak-t': peak.t.toISOString(),
            points: points(line),
            fill: 'none',
            stroke: '#1f3b73',
            'stroke-width': 1.3,
          }),
        );
      }
      // The closing limit at the window's end: after it, else inside it, else as a footnote.
      const nextStart = row.windows[k + 1] ? x(row.windows[k + 1]!.startUtc) - 4 : END_ROOM_X;
      const after = textBox(closes, b + 4, barTop + 11, FONT);
      const inside = textBox(closes, b - 4, barTop + 11, FONT, 'end');
      const attrs = { fill: '#7a1f1f', class: 'closes', 'data-closes': w.closesBecause };
      if (after.x + after.w <= nextStart && placer.place([after], laneBounds)) {
        inner.push(backdrop(after) + el('text', { x: b + 4, y: barTop + 11, 'font-size': FONT, ...attrs }, esc(closes)));
      } else if (inside.x >= a + 4 && placer.place([inside])) {
        inner.push(backdrop(inside) + el('text', { x: b - 4, y: barTop + 11, 'font-size': FONT, 'text-anchor': 'end', ...attrs }, esc(closes)));
      } else {
        footnotes.push(`${row.objectId}, window ${hm(w.startUtc)}–${hm(w.endUtc)} UTC closes: ${w.closesBecause}`);
        const mark = String(footnotes.length);
        inner.push(text(mark, { x: b + 2, y: barTop + 4 }, { size: 9, attrs: { ...attrs, class: 'closes footnote-mark' } }));
      }
    });

    // One lane per request.
    row.requests.forEach((r, k) => {
      const laneTop = top + ROW_HEAD + k * LANE;
      const mid = laneTop + 8;
      const wa = x(r.windowStartUtc);
      const wb = x(r.windowEndUtc);
      const sa = x(r.recommendedStartUtc);
      const sb = Math.max(x(new Date(r.recommendedStartUtc.getTime() + r.durationS * 1000)), sa + 2);
      const leased = r.state === 'leased';
      const label = `${KIND_WORDS[r.kind] ?? r.kind} ${num(r.score, 1)}${leased ? ' · leased' : ''}`;
      inner.push(text(label, { x: LEFT_X + 14, y: mid + 4 }, { attrs: { fill: '#222', class: 'request-label' } }));
      inner.push(
        el(
          'g',
          {
            class: 'request-mark',
            'data-request-id': r.requestId,
            'data-object-id': row.objectId,
            'data-kind': r.kind,
            'data-state': r.state,
            'data-score': r.score,
            'data-window-start': r.windowStartUtc.toISOString(),
            'data-window-end': r.windowEndUtc.toISOString(),
            'data-recommended-start': r.recommendedStartUtc.toISOString(),
            'data-duration-s': r.durationS,
          },
          el('title', {}, esc(`${row.objectId} ${KIND_WORDS[r.kind] ?? r.kind} (request ${r.requestId}, ${r.state}), score ${num(r.score, 1)}: start ${hm(r.recommendedStartUtc)} UTC for ${durationWords(r.durationS)}; window ${hm(r.windowStartUtc)}–${hm(r.windowEndUtc)} UTC${r.closesBecause ? `, closes: ${r.closesBecause}` : ''}`)) +
            el('line', { x1: wa, x2: wb, y1: mid, y2: mid, stroke: '#555', 'stroke-width': 1 }) +
            el('line', { x1: wa, x2: wa, y1: mid - 3, y2: mid + 3, stroke: '#555', 'stroke-width': 1 }) +
            el('line', { x1: wb, x2: wb, y1: mid - 3, y2: mid + 3, stroke: '#555', 'stroke-width': 1 }) +
            el('rect', { x: sa, y: mid - 4, width: sb - sa, height: 8, fill: leased ? '#ffffff' : '#8a3b12', stroke: '#8a3b12', 'stroke-width': 1.5 }),
        ),
      );
      const when = `${hm(r.recommendedStartUtc)} + ${durationWords(r.durationS)}`;
      const right = text(when, { x: sb + 5, y: mid + 4 }, { size: 10, attrs: { fill: '#5a2708', class: 'request-start' }, bounds: laneBounds, backdrop: true });
      inner.push(right || text(when, { x: sa - 5, y: mid + 4 }, { size: 10, anchor: 'end', attrs: { fill: '#5a2708', class: 'request-start' }, bounds: { x: X0, y: 0, w: X1 - X0, h: 1e6 }, backdrop: true }));
    });
    rowParts.push(
      el('g', { class: 'object-row', 'data-object-id': row.objectId, 'data-rank': row.rank, 'data-best-score': Number.isFinite(row.bestScore) ? row.bestScore : null, 'data-altitude-source': row.altitudeSource }, inner.join('')) +
        el('line', { x1: LEFT_X, x2: END_ROOM_X, y1: top + height - ROW_GAP / 2, y2: top + height - ROW_GAP / 2, stroke: '#9aa6b6', 'stroke-width': 0.6 }),
    );
    y += height;
  }
  if (chart.rows.length === 0) {
    rowParts.push(text('No queued or leased requests at this site tonight.', { x: X0 + 10, y: y + 20 }, { size: 12 }));
    y += 34;
  }
  const rowsBottom = y;

  // Bands behind the rows, named in the strip above them.
  const bandParts: string[] = [];
  for (const band of chart.bands) {
    const a = x(band.start);
    const b = x(band.end);
    const style = BAND_STYLE[band.kind];
    bandParts.push(
      el('rect', {
        class: `sky-band band-${band.kind}`,
        'data-kind': band.kind,
        'data-start': band.start.toISOString(),
        'data-end': band.end.toISOString(),
        x: a,
        y: STRIP_TOP,
        width: b - a,
        height: rowsBottom - STRIP_TOP,
        fill: style.fill,
      }),
    );
    if (band.kind === 'moonlit') bandParts.push(el('rect', { x: a, y: STRIP_TOP, width: b - a, height: rowsBottom - STRIP_TOP, fill: 'url(#moonlit-hatch)' }));
  }
  bandParts.push(el('rect', { x: X0, y: STRIP_TOP, width: X1 - X0, height: STRIP_H, fill: 'none', stroke: '#6b7a90', 'stroke-width': 0.8 }));
  parts.push(text('sky', { x: X0 - 10, y: STRIP_TOP + 13 }, { anchor: 'end', bold: true }));
  for (const band of chart.bands) {
    const a = x(band.start);
    const b = x(band.end);
    const words = BAND_STYLE[band.kind].words;
    if (b - a >= textWidthPx(words, 10) + 6) parts.push(text(words, { x: (a + b) / 2, y: STRIP_TOP + 13 }, { size: 10, anchor: 'middle', attrs: { fill: '#243044', class: 'band-name' } }));
  }

  // Tick lines through the rows and the tick labels.
  const tickParts: string[] = [];
  for (const t of ticks) {
    const xx = x(t);
    tickParts.push(el('line', { x1: xx, x2: xx, y1: AXIS_LOCAL_Y + 4, y2: rowsBottom, stroke: '#8c99ab', 'stroke-width': 0.5, 'stroke-dasharray': '2 3' }));
    parts.push(text(hm(t), { x: xx, y: AXIS_UTC_Y }, { anchor: 'middle', attrs: { class: 'utc-tick', 'data-utc': t.toISOString() } }));
    parts.push(text(clock.hhmm(t), { x: xx, y: AXIS_LOCAL_Y }, { anchor: 'middle', attrs: { class: 'local-tick', fill: '#555', 'data-utc': t.toISOString() } }));
  }

  // Now.
  const nowParts: string[] = [];
  if (chart.now) {
    const xx = x(chart.now);
    nowParts.push(el('line', { class: 'now', 'data-utc': chart.now.toISOString(), x1: xx, x2: xx, y1: 58, y2: rowsBottom, stroke: '#111', 'stroke-width': 1.2, 'stroke-dasharray': '5 3' }));
    const words = `now ${hm(chart.now)} UTC`;
    const right = xx + 4 + textWidthPx(words, 10) <= END_ROOM_X;
    nowParts.push(text(words, { x: right ? xx + 4 : xx - 4, y: 66 }, { size: 10, anchor: right ? 'start' : 'end', attrs: { class: 'now-label' } }));
  }

  // Limits beside the chart.
  const side = renderLimits(chart, placer, SIDE_X, 80);

  // Key and notes below.
  let ky = Math.max(rowsBottom + 26, 0);
  const keyParts: string[] = [];
  keyParts.push(text('Key', { x: LEFT_X, y: ky }, { bold: true }));
  let kx = LEFT_X + 40;
  const keyItem = (swatch: (sx: number, sy: number) => string, words: string) => {
    const w = 30 + textWidthPx(words, FONT) + 18;
    if (kx + w > END_ROOM_X) {
      kx = LEFT_X + 40;
      ky += 20;
    }
    keyParts.push(swatch(kx, ky - 9));
    keyParts.push(text(words, { x: kx + 30, y: ky }));
    kx += w;
  };
  for (const kind of ['day', 'twilight', 'dark', 'moonlit'] as const) {
    const words = kind === 'dark' ? 'dark, Moon down' : kind === 'moonlit' ? 'dark, Moon up' : BAND_STYLE[kind].words;
    keyItem(
      (sx, sy) => el('rect', { x: sx, y: sy, width: 24, height: 11, fill: BAND_STYLE[kind].fill, stroke: '#6b7a90', 'stroke-width': 0.6 }) + (kind === 'moonlit' ? el('rect', { x: sx, y: sy, width: 24, height: 11, fill: 'url(#moonlit-hatch)' }) : ''),
      words,
    );
  }
  keyItem(
    (sx, sy) => el('rect', { x: sx, y: sy - 1, width: 24, height: 13, fill: '#fff', stroke: '#2f3e55' }) + el('polyline', { points: points([[sx + 2, sy + 10], [sx + 12, sy + 2], [sx + 22, sy + 8]]), fill: 'none', stroke: '#1f3b73', 'stroke-width': 1.3 }),
    `observable window; the line inside is altitude (${num(chart.floorAltDeg, 1)}° at the bottom, 90° at the top)`,
  );
  keyItem(
    (sx, sy) => el('line', { x1: sx, x2: sx + 24, y1: sy + 5, y2: sy + 5, stroke: '#555' }) + el('rect', { x: sx + 6, y: sy + 1, width: 10, height: 8, fill: '#8a3b12', stroke: '#8a3b12' }),
    'request: recommended start and expected duration on its window (open block: leased)',
  );
  keyItem((sx, sy) => el('text', { x: sx, y: sy + 9, 'font-size': 10, fill: '#7a1f1f' }, 'limit'), 'at a window’s end: the limit that closes it');
  if (chart.now) keyItem((sx, sy) => el('line', { x1: sx + 12, x2: sx + 12, y1: sy - 2, y2: sy + 12, stroke: '#111', 'stroke-dasharray': '5 3' }), 'now');
  ky += 24;
  footnotes.forEach((f, i) => {
    keyParts.push(text(`${i + 1}. ${f}`, { x: LEFT_X, y: ky }, { size: 10 }));
    ky += 15;
  });
  const altitudeNote = chart.rows.some((r) => r.altitudeSource === 'request-table')
    ? ' Rows drawn from request tables show altitude only inside their requests’ windows.'
    : '';
  for (const line of wrapText(
    `Times in UTC; the second axis row is the site’s ${clock.label}. Rows are ranked by their best request score.${altitudeNote} Every window lies inside the site’s hard limits (beside); no score overrides them. Positions are estimates with uncertainty; the observatory decides what runs.`,
    END_ROOM_X - LEFT_X,
    10,
  )) {
    keyParts.push(text(line, { x: LEFT_X, y: ky }, { size: 10, attrs: { fill: '#444' } }));
    ky += 14;
  }
  for (const note of night.notes) {
    keyParts.push(text(note, { x: LEFT_X, y: ky }, { size: 10, attrs: { fill: '#444' } }));
    ky += 14;
  }

  const height = Math.ceil(Math.max(ky + 6, side.bottom + 12));
  const defs = el(
    'defs',
    {},
    el('pattern', { id: 'moonlit-hatch', width: 6, height: 6, patternUnits: 'userSpaceOnUse', patternTransform: 'rotate(45)' }, el('line', { x1: 0, y1: 0, x2: 0, y2: 6, stroke: '#b8a35a', 'stroke-width': 1, 'stroke-opacity': 0.5 })),
  );
  const objectList = chart.rows.map((r) => r.objectId).join(', ') || 'none';
  return svgDocument({
    widthPx: WIDTH,
    heightPx: height,
    className: 'tonight-chart',
    title: `Tonight at ${site.name}, night of ${night.localDate}`,
    desc:
      `Timeline from ${startUtc.toISOString()} to ${endUtc.toISOString()} UTC with the site's ${clock.label} beside it. ` +
      `Sunset ${night.sunset?.toISOString() ?? 'none'}, dark from ${night.dark?.start.toISOString() ?? 'never'} to ${night.dark?.end.toISOString() ?? 'never'}, sunrise ${night.sunrise?.toISOString() ?? 'none'}; Moon ${illum} percent illuminated. ` +
      `Rows, best score first: ${objectList}.`,
    data: { 'data-site-id': site.id, 'data-local-date': night.localDate, 'data-start': startUtc.toISOString(), 'data-end': endUtc.toISOString() },
    body: [defs, bandParts.join(''), tickParts.join(''), rowParts.join('\n'), nowParts.join(''), parts.join('\n'), side.markup, keyParts.join('\n')].join('\n'),
  });
}

/** The site's hard limits and horizon mask as a list with a small silhouette of the mask. */
function renderLimits(chart: TonightChart, placer: LabelPlacer, left: number, top: number): { markup: string; bottom: number } {
  const { site, night } = chart;
  const l = site.limits;
  const out: string[] = [];
  let y = top;
  const line = (words: string, options: { bold?: boolean; size?: number; fill?: string } = {}) => {
    const size = options.size ?? FONT;
    for (const piece of wrapText(words, SIDE_W, size)) {
      const box = textBox(piece, left, y, size, 'start', options.bold ?? false);
      placer.reserve(box);
      out.push(el('text', { x: left, y, 'font-size': size, 'font-weight': options.bold ? 'bold' : null, fill: options.fill ?? null }, esc(piece)));
      y += size + 4;
    }
  };
  line('Hard limits at this site', { bold: true, size: 12 });
  const moonNeed = requiredMoonSeparationDeg(l, night.moon.illuminatedFraction);
  const items = [
    `night: Sun below ${num(l.nightSunAltitudeDeg, 1)}°`,
    `altitude at least ${num(l.minAltitudeDeg, 1)}°`,
    l.maxAirmass !== undefined ? `airmass at most ${num(l.maxAirmass, 2)} (altitude ${num(altitudeForAirmassDeg(l.maxAirmass), 1)}°)` : 'no airmass limit',
    `hour angle ${num(l.hourAngleH.min, 2)} to ${num(l.hourAngleH.max, 2)} h`,
    `declination ${num(l.decDeg.min, 1)}° to ${num(l.decDeg.max, 1)}°`,
    `Sun at least ${num(l.sunAvoidanceDeg, 1)}° away`,
    l.moonSeparationScalesWithIllumination
      ? `Moon at least ${num(l.minMoonSeparationDeg, 1)}° × illuminated fraction away (at least 3°): ${num(moonNeed, 1)}° tonight`
      : `Moon at least ${num(l.minMoonSeparationDeg, 1)}° away`,
    `rate at most ${num(l.maxRateArcsecPerS, 3)}″/s`,
    l.zenithKeepOutDeg > 0 ? `nothing above ${num(90 - l.zenithKeepOutDeg, 1)}° (zenith keep-out)` : 'no zenith keep-out',
  ];
  for (const item of items) line(`• ${item}`);
  y += 6;
  line('Horizon mask (lowest altitude by azimuth)', { bold: true });
  const mask = [...(l.horizonMask ?? [])].sort((a, b) => a.azDeg - b.azDeg);
  if (mask.length === 0) {
    line('none configured: the altitude limit applies all round');
    return { markup: el('g', { class: 'limits' }, out.join('')), bottom: y };
  }
  // Silhouette: azimuth 0-360 across, altitude 0 to the mask's top (at least 40°) up; the altitude limit dashed.
  const gx = left + 22;
  const gw = SIDE_W - 26;
  const gy = y;
  const gh = 64;
  const topAlt = Math.max(40, Math.ceil((Math.max(...mask.map((p) => p.minAltitudeDeg), l.minAltitudeDeg) + 5) / 10) * 10);
  const px = (az: number) => gx + (az / 360) * gw;
  const py = (alt: number) => gy + gh - (alt / topAlt) * gh;
  const first = mask[0]!;
  const last = mask[mask.length - 1]!;
  // Wrap through north: the value at 0 and 360 interpolated between the last and first points.
  const span = first.azDeg + 360 - last.azDeg;
  const atNorth = span > 0 ? last.minAltitudeDeg + ((first.minAltitudeDeg - last.minAltitudeDeg) * (360 - last.azDeg)) / span : first.minAltitudeDeg;
  const profile: [number, number][] = [[0, atNorth], ...mask.map((p) => [p.azDeg, p.minAltitudeDeg] as [number, number]), [360, atNorth]];
  out.push(
    el(
      'g',
      { class: 'horizon-mask', 'data-points': mask.map((p) => `${p.azDeg}:${p.minAltitudeDeg}`).join(' ') },
      el('rect', { x: gx, y: gy, width: gw, height: gh, fill: '#f4f6f9', stroke: '#6b7a90', 'stroke-width': 0.6 }) +
        el('polygon', { points: points([[px(0), py(0)], ...profile.map(([az, alt]) => [px(az), py(alt)] as [number, number]), [px(360), py(0)]]), fill: '#7d8a99', 'fill-opacity': 0.55, stroke: '#3c4756', 'stroke-width': 1 }) +
        el('line', { x1: gx, x2: gx + gw, y1: py(l.minAltitudeDeg), y2: py(l.minAltitudeDeg), stroke: '#7a1f1f', 'stroke-dasharray': '4 3', 'stroke-width': 1 }),
    ),
  );
  for (const [alt, label] of [
    [topAlt, `${topAlt}°`],
    [0, '0°'],
  ] as const) {
    const baseline = alt === 0 ? py(0) : py(alt) + 7;
    const box = textBox(label, gx - 3, baseline, 9, 'end');
    if (placer.place([box])) out.push(el('text', { x: gx - 3, y: baseline, 'font-size': 9, 'text-anchor': 'end', fill: '#444' }, esc(label)));
  }
  for (const [az, label] of [
    [0, 'N'],
    [90, 'E'],
    [180, 'S'],
    [270, 'W'],
    [360, 'N'],
  ] as const) {
    const box = textBox(label, px(az), gy + gh + 13, 9, 'middle');
    if (placer.place([box])) out.push(el('text', { x: px(az), y: gy + gh + 13, 'font-size': 9, 'text-anchor': 'middle', fill: '#444' }, label));
  }
  y = gy + gh + 28;
  line(`dashed: the altitude limit ${num(l.minAltitudeDeg, 1)}°; the higher of the two binds`, { size: 10, fill: '#444' });
  line(mask.map((p) => `${num(p.azDeg, 1)}°: ${num(p.minAltitudeDeg, 1)}°`).join(', '), { size: 10 });
  return { markup: el('g', { class: 'limits' }, out.join('')), bottom: y };
}
