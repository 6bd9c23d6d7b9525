import type { Site } from '../config/schema.js';
import { nightAt, type Night } from '../sky/night.js';
import { altitudeForAirmassDeg, localSiderealTimeH } from '../sky/site.js';
import { skyAt } from '../sky/timeline.js';
import { el, esc, hhmmFromHours, hhmmUtc, num, points, seriesStyle, svgDocument } from './markup.js';

/**
 * The night at one site as a picture: apparent altitude (degrees, refracted) against UTC,
 * with twilight and the dark interval shaded, the Moon's altitude and illuminated fraction,
 * the site's altitude limit, and one curve per object with open requests, its request
 * windows drawn on the curve. Sun and Moon come from the sky module (astronomy-engine);
 * object altitudes are given by the caller (from its estimate or its requests' tables).
 */

/** Spacing of the Moon and chart samples, minutes. */
export const NIGHT_CHART_STEP_MIN = 10;
/** Margin drawn before sunset and after sunrise, minutes. */
const EDGE_MARGIN_MIN = 30;
const MS_PER_MIN = 60_000;

export interface NightWindowInput {
  requestId: string;
  kind: string;
  state: string;
  score: number;
  startUtc: Date;
  endUtc: Date;
}

export interface NightObjectInput {
  objectId: string;
  /** Where the altitudes came from, said in the picture: 'estimate' (the whole night) or 'request-table' (the windows only). */
  trackSource: 'estimate' | 'request-table';
  /** Apparent altitude, degrees, in time order. */
  track: { t: Date; altDeg: number }[];
  windows: NightWindowInput[];
}

export interface NightChart {
  site: Site;
  night: Night;
  startUtc: Date;
  endUtc: Date;
  /** The altitude that binds everywhere: the larger of minAltitudeDeg and the altitude of maxAirmass (Kasten & Young 1989). */
  limitAltDeg: number;
  limitReason: string;
  moon: { t: Date; altDeg: number }[];
  moonIlluminatedFraction: number;
  objects: NightObjectInput[];
  now: Date | null;
}

/**
 * The span the chart covers for a night: sunset minus 30 min to sunrise plus 30 min, or the
 * night's whole search span (local noon to noon) when the Sun does not set or rise.
 */
export function nightChartSpan(night: Night): { startUtc: Date; endUtc: Date } {
  const startUtc = night.sunset ? new Date(night.sunset.getTime() - EDGE_MARGIN_MIN * MS_PER_MIN) : night.span.start;
  const endUtc = night.sunrise ? new Date(night.sunrise.getTime() + EDGE_MARGIN_MIN * MS_PER_MIN) : night.span.end;
  return { startUtc, endUtc };
}

/** Sample times across [startUtc, endUtc] every `stepMin` minutes, the end included. */
export function sampleTimes(startUtc: Date, endUtc: Date, stepMin = NIGHT_CHART_STEP_MIN): Date[] {
  const out: Date[] = [];
  for (let t = startUtc.getTime(); t < endUtc.getTime(); t += stepMin * MS_PER_MIN) out.push(new Date(t));
  out.push(endUtc);
  return out;
}

/** The chart's data for the night of `localDate` (YYYY-MM-DD, the sky module's night rule) at the site. */
export function buildNightChart(input: { site: Site; localDate: string; night?: Night; objects: NightObjectInput[]; now?: Date }): NightChart {
  const { site } = input;
  const night = input.night ?? nightAt(site, input.localDate);
  const { startUtc, endUtc } = nightChartSpan(night);
  const moon = sampleTimes(startUtc, endUtc).map((t) => ({ t, altDeg: skyAt(site, t).moon.altDeg }));
  const airmassAlt = site.limits.maxAirmass !== undefined ? altitudeForAirmassDeg(site.limits.maxAirmass) : -Infinity;
  const limitAltDeg = Math.max(site.limits.minAltitudeDeg, airmassAlt);
  const limitReason =
    limitAltDeg === site.limits.minAltitudeDeg
      ? `minimum altitude ${num(limitAltDeg, 1)}°`
      : `airmass ${num(site.limits.maxAirmass ?? 0, 2)} (altitude ${num(limitAltDeg, 1)}°)`;
  const now = input.now && input.now >= startUtc && input.now <= endUtc ? input.now : null;
  return { site, night, startUtc, endUtc, limitAltDeg, limitReason, moon, moonIlluminatedFraction: night.moon.illuminatedFraction, objects: input.objects, now };
}

const WIDTH = 1000;
const HEIGHT = 560;
const PLOT = { left: 64, right: 760, top: 92, bottom: 480 };
const ALT_MIN = 0;
const ALT_MAX = 90;
const KIND_SHORT: Record<string, string> = { photometry: 'phot', colours: 'col', spectrum: 'spec' };

interface Box {
  x: number;
  y: number;
  w: number;
  h: number;
}

const overlaps = (a: Box, b: Box) => a.x < b.x + b.w && b.x < a.x + a.w && a.y < b.y + b.h && b.y < a.y + a.h;

/** Renders the chart as a standalone SVG document (text labels for everything shaded or coloured). */
export function renderNightChart(chart: NightChart): string {
  const { site, night, startUtc, endUtc } = chart;
  const t0 = startUtc.getTime();
  const spanMs = endUtc.getTime() - t0;
  const x = (t: Date) => PLOT.left + ((t.getTime() - t0) / spanMs) * (PLOT.right - PLOT.left);
  const y = (altDeg: number) => PLOT.bottom - ((Math.min(ALT_MAX, Math.max(ALT_MIN - 5, altDeg)) - ALT_MIN) / (ALT_MAX - ALT_MIN)) * (PLOT.bottom - PLOT.top);
  const clampT = (t: Date) => new Date(Math.min(endUtc.getTime(), Math.max(t0, t.getTime())));
  const parts: string[] = [];
  const placed: Box[] = [];

  const label = (text: string, at: { x: number; y: number }, extra: Record<string, string | number> = {}) => {
    const w = text.length * 7.4 + 4;
    const box: Box = { x: at.x - 2, y: at.y - 12, w, h: 15 };
    for (let i = 0; i < 12 && placed.some((p) => overlaps(p, box)); i++) box.y -= 15;
    placed.push(box);
    return el('text', { x: box.x + 2, y: box.y + 12, class: 'label', ...extra, 'paint-order': 'stroke', stroke: '#ffffff', 'stroke-width': 3 }, esc(text));
  };

  // Title.
  parts.push(el('text', { x: PLOT.left, y: 24, 'font-size': 16, 'font-weight': 'bold' }, esc(`Night of ${night.localDate} at ${site.name}`)));
  parts.push(
    el(
      'text',
      { x: PLOT.left, y: 42, 'font-size': 12 },
      esc(`Altitude of objects with queued or leased requests; Moon ${Math.round(chart.moonIlluminatedFraction * 100)}% illuminated. Local date in local mean time.`),
    ),
  );

  // Shading: twilight (sunset to dusk, dawn to sunrise) and the dark interval.
  const band = (cls: string, from: Date | null, to: Date | null, fill: string, text: string) => {
    if (!from || !to || to <= from) return;
    const a = x(clampT(from));
    const b = x(clampT(to));
    parts.push(el('rect', { class: cls, x: a, y: PLOT.top, width: b - a, height: PLOT.bottom - PLOT.top, fill, 'data-start': from.toISOString(), 'data-end': to.toISOString() }));
    if (b - a > 40) parts.push(el('text', { x: (a + b) / 2, y: PLOT.bottom - 6, 'text-anchor': 'middle', 'font-size': 11, fill: '#333' }, esc(text)));
  };
  band('twilight', night.sunset ?? startUtc, night.dusk ?? night.dark?.start ?? null, '#eef1f6', 'twilight');
  band('twilight', night.dawn ?? night.dark?.end ?? null, night.sunrise ?? endUtc, '#eef1f6', 'twilight');
  if (night.dark) band('dark', night.dark.start, night.dark.end, '#d4dbe6', `dark (Sun below ${num(night.nightSunAltitudeDeg, 0)}°)`);

  // Altitude grid and axis.
  for (let alt = ALT_MIN; alt <= ALT_MAX; alt += 15) {
    parts.push(el('line', { x1: PLOT.left, x2: PLOT.right, y1: y(alt), y2: y(alt), stroke: '#b7b7b7', 'stroke-width': 0.5 }));
    parts.push(el('text', { x: PLOT.left - 6, y: y(alt) + 4, 'text-anchor': 'end' }, `${alt}°`));
  }
  parts.push(
    el('text', { x: 16, y: (PLOT.top + PLOT.bottom) / 2, transform: `rotate(-90 16 ${num((PLOT.top + PLOT.bottom) / 2)})`, 'text-anchor': 'middle' }, 'altitude (degrees, apparent)'),
  );

  // Time axes: UTC below, local sidereal time above, at whole UTC hours.
  const firstHour = Math.ceil(t0 / 3_600_000) * 3_600_000;
  for (let t = firstHour; t <= endUtc.getTime(); t += 3_600_000) {
    const at = new Date(t);
    const xx = x(at);
    parts.push(el('line', { x1: xx, x2: xx, y1: PLOT.top, y2: PLOT.bottom, stroke: '#b7b7b7', 'stroke-width': 0.5 }));
    parts.push(el('text', { x: xx, y: PLOT.bottom + 16, 'text-anchor': 'middle', class: 'utc-tick', 'data-utc': at.toISOString() }, hhmmUtc(at)));
    const lst = localSiderealTimeH(site.location, at);
    parts.push(el('text', { x: xx, y: PLOT.top - 8, 'text-anchor': 'middle', class: 'lst-tick', 'data-lst-h': num(lst, 4), fill: '#444' }, hhmmFromHours(lst)));
  }
  parts.push(el('text', { x: (PLOT.left + PLOT.right) / 2, y: PLOT.bottom + 36, 'text-anchor': 'middle' }, 'time (UTC, hh:mm)'));
  parts.push(el('text', { x: (PLOT.left + PLOT.right) / 2, y: PLOT.top - 26, 'text-anchor': 'middle', fill: '#444' }, 'local sidereal time (hh:mm)'));
  parts.push(el('rect', { x: PLOT.left, y: PLOT.top, width: PLOT.right - PLOT.left, height: PLOT.bottom - PLOT.top, fill: 'none', stroke: '#333' }));

  // The altitude limit.
  parts.push(
    el('line', {
      class: 'altitude-limit',
      'data-altitude-deg': num(chart.limitAltDeg, 3),
      x1: PLOT.left,
      x2: PLOT.right,
      y1: y(chart.limitAltDeg),
      y2: y(chart.limitAltDeg),
      stroke: '#c00000',
      'stroke-width': 1.5,
      'stroke-dasharray': '6 3',
    }),
  );
  parts.push(label(`limit: ${chart.limitReason}; horizon mask may be higher`, { x: PLOT.left + 6, y: y(chart.limitAltDeg) - 4 }, { fill: '#a00000' }));

  // The Moon.
  const moonUp = chart.moon.filter((m) => m.altDeg > -5);
  if (moonUp.length > 1) {
    parts.push(
      el('polyline', {
        class: 'moon-curve',
        'data-illuminated-fraction': num(chart.moonIlluminatedFraction, 3),
        points: points(chart.moon.map((m) => [x(m.t), y(m.altDeg)] as const)),
        fill: 'none',
        stroke: '#7a7a7a',
        'stroke-width': 2,
        'stroke-dasharray': '1 4',
        'stroke-linecap': 'round',
        'clip-path': 'url(#night-plot)',
      }),
    );
    const peak = chart.moon.reduce((a, b) => (b.altDeg > a.altDeg ? b : a));
    if (peak.altDeg > 0) {
      const text = `Moon ${Math.round(chart.moonIlluminatedFraction * 100)}%`;
      parts.push(label(text, { x: Math.min(Math.max(x(peak.t) - 20, PLOT.left + 4), PLOT.right - text.length * 7.4 - 4), y: Math.max(y(peak.altDeg) - 6, PLOT.top + 14) }, { fill: '#555' }));
    }
  }

  // Objects: the curve, then the windows on it.
  chart.objects.forEach((obj, i) => {
    const style = seriesStyle(i);
    const track = obj.track.filter((p) => p.t >= startUtc && p.t <= endUtc);
    parts.push(
      el('polyline', {
        class: 'object-curve',
        'data-object-id': obj.objectId,
        'data-source': obj.trackSource,
        points: points(track.map((p) => [x(p.t), y(p.altDeg)] as const)),
        fill: 'none',
        stroke: style.stroke,
        'stroke-width': 1.6,
        'stroke-dasharray': style.dash,
        'clip-path': 'url(#night-plot)',
      }),
    );
    obj.windows.forEach((w, k) => {
      const inside = track.filter((p) => p.t >= w.startUtc && p.t <= w.endUtc);
      // Each window of the object sits a little below its curve so coinciding windows stay visible.
      const offsetPx = 5 + 7 * k;
      const barXY: (readonly [number, number])[] =
        inside.length >= 2
          ? inside.map((p) => [x(p.t), y(p.altDeg) + offsetPx] as const)
          : [
              [x(clampT(w.startUtc)), PLOT.bottom - 14 - 7 * k],
              [x(clampT(w.endUtc)), PLOT.bottom - 14 - 7 * k],
            ];
      parts.push(
        el(
          'g',
          {
            class: 'request-window',
            'data-request-id': w.requestId,
            'data-object-id': obj.objectId,
            'data-kind': w.kind,
            'data-state': w.state,
            'data-score': num(w.score, 3),
            'data-start': w.startUtc.toISOString(),
            'data-end': w.endUtc.toISOString(),
          },
          el('title', {}, esc(`${obj.objectId} ${w.kind} request ${w.requestId}, score ${num(w.score, 1)}, ${hhmmUtc(w.startUtc)}–${hhmmUtc(w.endUtc)} UTC, ${w.state}`)) +
            el('polyline', { points: points(barXY), fill: 'none', stroke: style.stroke, 'stroke-width': 5, 'stroke-opacity': 0.5, 'stroke-linecap': 'butt' }),
        ),
      );
    });
    // One label per object: its designation, then each window's kind and score.
    const firstWindow = [...obj.windows].sort((a, b) => a.startUtc.getTime() - b.startUtc.getTime())[0];
    if (firstWindow) {
      const startPoint = track.find((p) => p.t >= firstWindow.startUtc && p.t <= firstWindow.endUtc);
      const lx = x(clampT(firstWindow.startUtc));
      const ly = startPoint ? y(startPoint.altDeg) - 8 : PLOT.bottom - 24;
      const text = `${obj.objectId}: ${obj.windows.map((w) => `${KIND_SHORT[w.kind] ?? w.kind} ${num(w.score, 0)}${w.state === 'leased' ? ' leased' : ''}`).join(', ')}`;
      parts.push(label(text, { x: Math.min(lx + 4, PLOT.right - text.length * 7.4), y: ly }, { fill: style.stroke, class: 'object-label', 'data-object-id': obj.objectId }));
    }
  });

  if (chart.now) {
    const xx = x(chart.now);
    parts.push(el('line', { class: 'now', x1: xx, x2: xx, y1: PLOT.top, y2: PLOT.bottom, stroke: '#000', 'stroke-width': 1 }));
    parts.push(el('text', { x: xx + 3, y: PLOT.top + 14, 'font-size': 11 }, esc(`now ${hhmmUtc(chart.now)}`)));
  }

  // Legend: every style in words.
  const lx = PLOT.right + 18;
  let ly = PLOT.top + 4;
  const legend: string[] = [el('text', { x: lx, y: ly, 'font-weight': 'bold' }, 'Key')];
  const row = (swatch: (midY: number) => string, text: string) => {
    ly += 20;
    legend.push(swatch(ly - 4) + el('text', { x: lx + 34, y: ly }, esc(text)));
  };
  row((my) => el('rect', { x: lx, y: my - 5, width: 26, height: 10, fill: '#eef1f6', stroke: '#999' }), 'twilight');
  row((my) => el('rect', { x: lx, y: my - 5, width: 26, height: 10, fill: '#d4dbe6', stroke: '#999' }), 'dark');
  row((my) => el('line', { x1: lx, x2: lx + 26, y1: my, y2: my, stroke: '#c00000', 'stroke-width': 1.5, 'stroke-dasharray': '6 3' }), 'altitude limit');
  row((my) => el('line', { x1: lx, x2: lx + 26, y1: my, y2: my, stroke: '#7a7a7a', 'stroke-width': 2, 'stroke-dasharray': '1 4' }), `Moon (${Math.round(chart.moonIlluminatedFraction * 100)}% lit)`);
  row((my) => el('line', { x1: lx, x2: lx + 26, y1: my, y2: my, stroke: '#555', 'stroke-width': 5, 'stroke-opacity': 0.5 }), 'request window');
  chart.objects.forEach((obj, i) => {
    const style = seriesStyle(i);
    row(
      (my) => el('line', { x1: lx, x2: lx + 26, y1: my, y2: my, stroke: style.stroke, 'stroke-width': 1.6, 'stroke-dasharray': style.dash }),
      `${obj.objectId}${obj.trackSource === 'request-table' ? ' (windows only)' : ''}`,
    );
  });
  if (chart.objects.length === 0) {
    ly += 24;
    legend.push(el('text', { x: lx, y: ly }, 'No queued or leased'), el('text', { x: lx, y: ly + 15 }, 'requests this night.'));
  }
  ly += 30;
  legend.push(el('text', { x: lx, y: ly, 'font-size': 10, fill: '#444' }, 'phot = photometry,'));
  legend.push(el('text', { x: lx, y: ly + 13, 'font-size': 10, fill: '#444' }, 'col = colours, spec = spectrum;'));
  legend.push(el('text', { x: lx, y: ly + 26, 'font-size': 10, fill: '#444' }, 'the number is the score (0-100).'));
  parts.push(legend.join('\n'));

  if (night.notes.length > 0) parts.push(el('text', { x: PLOT.left, y: HEIGHT - 16, 'font-size': 11 }, esc(night.notes.join('; '))));
  parts.push(
    el(
      'text',
      { x: PLOT.left, y: HEIGHT - 4, 'font-size': 10, fill: '#555' },
      esc('Positions are estimates with uncertainty; the observatory decides what runs.'),
    ),
  );

  const clip = el('defs', {}, el('clipPath', { id: 'night-plot' }, el('rect', { x: PLOT.left, y: PLOT.top, width: PLOT.right - PLOT.left, height: PLOT.bottom - PLOT.top })));
  const objectList = chart.objects.map((o) => o.objectId).join(', ') || 'none';
  return svgDocument({
    widthPx: WIDTH,
    heightPx: HEIGHT,
    className: 'night-chart',
    title: `Night of ${night.localDate} at ${site.name}`,
    desc:
      `Altitude in degrees against UTC from ${startUtc.toISOString()} to ${endUtc.toISOString()}, local sidereal time on the top axis. ` +
      `Sunset ${night.sunset?.toISOString() ?? 'none'}, dark from ${night.dark?.start.toISOString() ?? 'never'} to ${night.dark?.end.toISOString() ?? 'never'}, sunrise ${night.sunrise?.toISOString() ?? 'none'}. ` +
      `Moon ${Math.round(chart.moonIlluminatedFraction * 100)} percent illuminated. Altitude limit ${chart.limitReason}. Objects: ${objectList}.`,
    data: { 'data-site-id': site.id, 'data-local-date': night.localDate },
    body: clip + '\n' + parts.join('\n'),
  });
}
