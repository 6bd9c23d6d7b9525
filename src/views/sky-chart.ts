import { el, esc, num, svgDocument } from './markup.js';

/**
 * One object's place on the sky at one instant as a picture: the tangent plane around the
 * nominal position, north up and east left (as the sky is seen), with the virtual orbits as
 * points, the 1- and 3-sigma ellipses, the imager field and the slit to scale, the motion
 * over the next 10 minutes and a scale bar in arcsec. Two panels: a wide one that holds the
 * imager field, and a close one that holds the uncertainty region.
 */

const ARCSEC_PER_RAD = (180 / Math.PI) * 3600;
const RAD = Math.PI / 180;
/** How far ahead the motion vector reaches, s. */
export const MOTION_VECTOR_S = 600;

/** A bad input to a picture: names the field, the value and the reason. */
export class ViewInputError extends Error {
  override readonly name = 'ViewInputError';
  constructor(
    readonly field: string,
    readonly value: unknown,
    reason: string,
  ) {
    super(`${field} = ${typeof value === 'string' ? JSON.stringify(value) : String(value)}: ${reason}`);
  }
}

function requireFinite(field: string, value: number, min = -Infinity, max = Infinity): number {
  if (typeof value !== 'number' || !Number.isFinite(value)) throw new ViewInputError(field, value, 'expected a finite number');
  if (value < min || value > max) throw new ViewInputError(field, value, `expected a value in [${min}, ${max}]`);
  return value;
}

/**
 * Standard coordinates (xi east, eta north), arcsec, of (raDeg, decDeg) on the plane tangent
 * at (ra0Deg, dec0Deg): the gnomonic projection, FITS "TAN" (Calabretta & Greisen 2002,
 * A&A 395, 1077, eqs. 5, 54 written in the native frame of the tangent point; the same as
 * the standard coordinates of photographic astrometry). Undefined 90 deg or more from the
 * tangent point: throws.
 */
export function tangentPlaneArcsec(ra0Deg: number, dec0Deg: number, raDeg: number, decDeg: number): { xi: number; eta: number } {
  requireFinite('ra0Deg', ra0Deg);
  requireFinite('dec0Deg', dec0Deg, -90, 90);
  requireFinite('raDeg', raDeg);
  requireFinite('decDeg', decDeg, -90, 90);
  const d0 = dec0Deg * RAD;
  const d = decDeg * RAD;
  const dRa = (raDeg - ra0Deg) * RAD;
  const cosC = Math.sin(d0) * Math.sin(d) + Math.cos(d0) * Math.cos(d) * Math.cos(dRa);
  if (!(cosC > 1e-9)) throw new ViewInputError('raDeg/decDeg', `${raDeg}, ${decDeg}`, `90 deg or more from the tangent point ${ra0Deg}, ${dec0Deg}`);
  return {
    xi: ((Math.cos(d) * Math.sin(dRa)) / cosC) * ARCSEC_PER_RAD,
    eta: ((Math.cos(d0) * Math.sin(d) - Math.sin(d0) * Math.cos(d) * Math.cos(dRa)) / cosC) * ARCSEC_PER_RAD,
  };
}

export interface SkyChartInput {
  objectId: string;
  siteId: string;
  siteName: string;
  timeUtc: Date;
  /** 'estimate': the on-demand orbit estimate; 'request-table': interpolated in an open request's ephemeris table. */
  positionSource: 'estimate' | 'request-table';
  /** Nominal astrometric ICRS place, deg; rates arcsec/s (RA rate times cos Dec). */
  raDeg: number;
  decDeg: number;
  raRate: number;
  decRate: number;
  vMag: number | null;
  /** 1-sigma ellipse: semi-axes arcsec, position angle of the major axis deg east of north; null when unknown. */
  unc: { major: number; minor: number; pa: number } | null;
  /** Virtual orbits' places, deg; null when the estimate has no ensemble. */
  members: { raDeg: number; decDeg: number }[] | null;
  imagerFieldArcmin: { width: number; height: number };
  /** The slit: width and length arcsec, position angle of its long side deg east of north (and why that angle). */
  slit: { widthArcsec: number; lengthArcsec: number; paDeg: number; paReason: string } | null;
}

/** A round length for a scale bar, arcsec: 1, 2 or 5 times a power of ten, near a quarter of the extent. */
export function scaleBarArcsec(extentArcsec: number): number {
  requireFinite('extentArcsec', extentArcsec, Number.MIN_VALUE);
  const target = extentArcsec / 4;
  const p = 10 ** Math.floor(Math.log10(target));
  const m = target / p;
  return (m >= 5 ? 5 : m >= 2 ? 2 : 1) * p;
}

function formatArcsec(a: number): string {
  if (a >= 3600) return `${num(a / 3600, 2)}°`;
  if (a >= 120) return `${num(a / 60, 1)}′`;
  return `${num(a, a < 1 ? 2 : a < 10 ? 1 : 0)}″`;
}

function sexagesimal(value: number, hours: boolean): string {
  const sign = value < 0 ? '-' : hours ? '' : '+';
  const v = Math.abs(hours ? value / 15 : value);
  let total = Math.round(v * 3600 * (hours ? 100 : 10));
  const div = hours ? 100 : 10;
  const frac = total % div;
  total = Math.floor(total / div);
  const s = total % 60;
  const m = Math.floor(total / 60) % 60;
  const d = Math.floor(total / 3600);
  const p2 = (n: number) => String(n).padStart(2, '0');
  return `${sign}${p2(d)}${hours ? 'h' : '°'}${p2(m)}${hours ? 'm' : '′'}${p2(s)}.${String(frac).padStart(hours ? 2 : 1, '0')}${hours ? 's' : '″'}`;
}

const PANEL = 420;
const WIDTH = 940;
const HEIGHT = 600;

interface Panel {
  name: 'wide' | 'close';
  x0: number;
  y0: number;
  /** Half-width of the panel, arcsec. */
  extentArcsec: number;
}

/** Renders the sky picture as a standalone SVG document. */
export function renderSkyChart(input: SkyChartInput): string {
  requireFinite('raDeg', input.raDeg, 0, 360);
  requireFinite('decDeg', input.decDeg, -90, 90);
  requireFinite('raRate', input.raRate);
  requireFinite('decRate', input.decRate);
  if (input.unc) {
    requireFinite('unc.major', input.unc.major, 0);
    requireFinite('unc.minor', input.unc.minor, 0);
    requireFinite('unc.pa', input.unc.pa);
  }
  const members = (input.members ?? []).map((m) => tangentPlaneArcsec(input.raDeg, input.decDeg, m.raDeg, m.decDeg));
  const motion = { xi: input.raRate * MOTION_VECTOR_S, eta: input.decRate * MOTION_VECTOR_S };
  const motionLen = Math.hypot(motion.xi, motion.eta);
  const major3 = input.unc ? 3 * input.unc.major : 0;
  const memberRadii = members.map((m) => Math.hypot(m.xi, m.eta)).sort((a, b) => a - b);
  const member95 = memberRadii.length > 0 ? memberRadii[Math.min(memberRadii.length - 1, Math.floor(0.95 * memberRadii.length))]! : 0;
  const halfField = (Math.hypot(input.imagerFieldArcmin.width, input.imagerFieldArcmin.height) * 60) / 2;
  const wideExtent = Math.max(halfField, input.slit ? input.slit.lengthArcsec / 2 : 0, motionLen, major3, member95) * 1.1;
  const closeExtent = Math.max(major3, member95, input.slit ? input.slit.widthArcsec * 2 : 0, 2) * 1.25;
  const panels: Panel[] = [
    { name: 'wide', x0: 30, y0: 96, extentArcsec: wideExtent },
    { name: 'close', x0: 30 + PANEL + 40, y0: 96, extentArcsec: closeExtent },
  ];
  const parts: string[] = [];
  parts.push(el('text', { x: 30, y: 26, 'font-size': 16, 'font-weight': 'bold' }, esc(`${input.objectId} on the sky at ${input.timeUtc.toISOString().replace('.000Z', 'Z')} (UTC), seen from ${input.siteId}`)));
  parts.push(
    el(
      'text',
      { x: 30, y: 46 },
      esc(
        `Nominal RA ${sexagesimal(input.raDeg, true)} Dec ${sexagesimal(input.decDeg, false)} (ICRS astrometric, ${num(input.raDeg, 5)}°, ${num(input.decDeg, 5)}°)` +
          (input.vMag !== null ? `, V ${num(input.vMag, 1)}` : ''),
      ),
    ),
  );
  parts.push(
    el(
      'text',
      { x: 30, y: 64 },
      esc(
        `Rate RA×cos Dec ${num(input.raRate, 4)}″/s, Dec ${num(input.decRate, 4)}″/s; ` +
          (input.unc ? `1σ ellipse ${num(input.unc.major, 2)}″ × ${num(input.unc.minor, 2)}″ at PA ${num(input.unc.pa, 1)}°` : 'no uncertainty ellipse') +
          `; position from ${input.positionSource === 'estimate' ? 'the orbit estimate' : 'the request ephemeris table'}.`,
      ),
    ),
  );

  for (const panel of panels) parts.push(renderPanel(panel, input, members, motion));

  const notes: string[] = [
    'North up, east left, as the sky is seen. Offsets on the tangent plane (gnomonic projection) around the nominal position.',
    input.members === null
      ? 'Virtual-orbit points are not available for this estimate: the ellipses show the 1- and 3-sigma region.'
      : `${members.length} virtual orbits drawn as points.`,
    `Imager field ${num(input.imagerFieldArcmin.width, 1)}′ × ${num(input.imagerFieldArcmin.height, 1)}′ drawn with its sides north-south and east-west.` +
      (input.slit ? ` Slit ${num(input.slit.widthArcsec, 1)}″ × ${num(input.slit.lengthArcsec, 0)}″ at PA ${num(input.slit.paDeg, 1)}° (${input.slit.paReason}).` : ' No spectrograph at this site.'),
    'Positions are estimates with uncertainty, not impact predictions; the observatory decides what runs.',
  ];
  notes.forEach((n, i) => parts.push(el('text', { x: 30, y: HEIGHT - 64 + i * 16, 'font-size': 11, fill: '#333' }, esc(n))));

  return svgDocument({
    widthPx: WIDTH,
    heightPx: HEIGHT,
    className: 'sky-chart',
    title: `${input.objectId} on the sky at ${input.timeUtc.toISOString()} from ${input.siteName}`,
    desc:
      `Tangent-plane view, north up and east left, around RA ${num(input.raDeg, 5)} deg, Dec ${num(input.decDeg, 5)} deg. ` +
      (input.unc ? `1-sigma ellipse ${num(input.unc.major, 3)} by ${num(input.unc.minor, 3)} arcsec at position angle ${num(input.unc.pa, 1)} deg; 3-sigma ellipse three times larger. ` : 'No uncertainty ellipse. ') +
      `Motion over ${MOTION_VECTOR_S / 60} minutes ${num(motionLen, 1)} arcsec. ` +
      (input.members === null ? 'Virtual-orbit points not available.' : `${members.length} virtual-orbit points.`) +
      ` Left panel ${formatArcsec(2 * wideExtent)} across, right panel ${formatArcsec(2 * closeExtent)} across.`,
    data: {
      'data-object-id': input.objectId,
      'data-site-id': input.siteId,
      'data-t': input.timeUtc.toISOString(),
      'data-ra-deg': input.raDeg,
      'data-dec-deg': input.decDeg,
      'data-position-source': input.positionSource,
    },
    body: parts.join('\n'),
  });
}

function renderPanel(panel: Panel, input: SkyChartInput, members: { xi: number; eta: number }[], motion: { xi: number; eta: number }): string {
  const scale = PANEL / 2 / panel.extentArcsec; // px per arcsec
  const cx = panel.x0 + PANEL / 2;
  const cy = panel.y0 + PANEL / 2;
  // East left: screen x decreases with xi; north up: screen y decreases with eta.
  const sx = (xi: number) => cx - xi * scale;
  const sy = (eta: number) => cy - eta * scale;
  // A position angle (deg east of north) as the SVG rotation that turns the x axis onto it:
  // on screen that direction is (-sin pa, -cos pa), i.e. at -(90 + pa) deg.
  const rotationFor = (paDeg: number) => -(90 + paDeg);
  const clipId = `sky-${panel.name}`;
  const out: string[] = [];
  out.push(el('defs', {}, el('clipPath', { id: clipId }, el('rect', { x: panel.x0, y: panel.y0, width: PANEL, height: PANEL }))));
  out.push(el('rect', { x: panel.x0, y: panel.y0, width: PANEL, height: PANEL, fill: '#f7f8fb', stroke: '#333' }));
  out.push(
    el(
      'text',
      { x: panel.x0, y: panel.y0 - 8, 'font-weight': 'bold' },
      esc(panel.name === 'wide' ? `Wide: ${formatArcsec(2 * panel.extentArcsec)} across (imager field)` : `Close: ${formatArcsec(2 * panel.extentArcsec)} across (uncertainty region)`),
    ),
  );
  const inner: string[] = [];
  // Crosshair at the nominal position.
  inner.push(el('line', { x1: cx - 8, x2: cx + 8, y1: cy, y2: cy, stroke: '#000' }), el('line', { x1: cx, x2: cx, y1: cy - 8, y2: cy + 8, stroke: '#000' }));
  // Imager field, sides along north-south and east-west.
  const fw = input.imagerFieldArcmin.width * 60;
  const fh = input.imagerFieldArcmin.height * 60;
  inner.push(
    el('rect', {
      class: 'imager-field',
      'data-width-arcsec': fw,
      'data-height-arcsec': fh,
      x: cx - (fw / 2) * scale,
      y: cy - (fh / 2) * scale,
      width: fw * scale,
      height: fh * scale,
      fill: 'none',
      stroke: '#1f4e79',
      'stroke-width': 1.5,
    }),
  );
  if (panel.name === 'wide') {
    inner.push(el('text', { x: cx - (fw / 2) * scale + 4, y: cy - (fh / 2) * scale + 14, fill: '#1f4e79' }, esc(`imager field ${num(input.imagerFieldArcmin.width, 1)}′ × ${num(input.imagerFieldArcmin.height, 1)}′`)));
  }
  if (input.slit) {
    const { widthArcsec: w, lengthArcsec: l, paDeg } = input.slit;
    inner.push(
      el('rect', {
        class: 'slit',
        'data-width-arcsec': w,
        'data-length-arcsec': l,
        'data-pa-deg': num(paDeg, 3),
        x: cx - (l / 2) * scale,
        y: cy - (w / 2) * scale,
        width: l * scale,
        height: Math.max(w * scale, 1),
        fill: '#6aa84f',
        'fill-opacity': 0.35,
        stroke: '#274e13',
        'stroke-width': 1,
        transform: `rotate(${num(rotationFor(paDeg), 3)} ${num(cx)} ${num(cy)})`,
      }),
    );
    // Label the end of the slit that points away from the motion, so the two labels stay apart.
    const away = Math.sin(paDeg * RAD) * motion.xi + Math.cos(paDeg * RAD) * motion.eta > 0 ? -1 : 1;
    const endXi = away * (l / 2) * Math.sin(paDeg * RAD);
    const endEta = away * (l / 2) * Math.cos(paDeg * RAD);
    if (panel.name === 'wide') inner.push(el('text', { x: sx(endXi) + 4, y: sy(endEta) - 4, fill: '#274e13' }, esc(`slit ${num(w, 1)}″`)));
  }
  // Virtual orbits.
  if (members.length > 0) {
    inner.push(
      el(
        'g',
        { class: 'members', 'data-count': members.length, fill: '#444', 'fill-opacity': 0.55 },
        members.map((m) => el('circle', { cx: sx(m.xi), cy: sy(m.eta), r: 1.6 })).join(''),
      ),
    );
  }
  // Ellipses: 1 sigma solid, 3 sigma dashed.
  if (input.unc) {
    const { major, minor, pa } = input.unc;
    for (const [k, cls, dash] of [
      [1, 'sigma-1', null],
      [3, 'sigma-3', '6 4'],
    ] as const) {
      inner.push(
        el('ellipse', {
          class: `uncertainty ${cls}`,
          'data-sigma': k,
          'data-major-arcsec': num(k * major, 6),
          'data-minor-arcsec': num(k * minor, 6),
          'data-pa-deg': num(pa, 6),
          cx,
          cy,
          rx: Math.max(k * major * scale, 0.5),
          ry: Math.max(k * minor * scale, 0.5),
          transform: `rotate(${num(rotationFor(pa), 3)} ${num(cx)} ${num(cy)})`,
          fill: 'none',
          stroke: '#990000',
          'stroke-width': k === 1 ? 2 : 1.5,
          'stroke-dasharray': dash,
        }),
      );
    }
    if (panel.name === 'close') {
      const r3 = 3 * major * scale;
      const a = rotationFor(pa) * RAD;
      inner.push(el('text', { x: cx + Math.cos(a) * r3 + 6, y: cy + Math.sin(a) * r3, fill: '#990000' }, '3σ'));
      inner.push(el('text', { x: cx + Math.cos(a) * major * scale + 6, y: cy + Math.sin(a) * major * scale - 6, fill: '#990000' }, '1σ'));
    }
  }
  // Motion over the next 10 minutes.
  const mx = sx(motion.xi);
  const my = sy(motion.eta);
  const len = Math.hypot(mx - cx, my - cy);
  if (len > 2) {
    const ux = (mx - cx) / len;
    const uy = (my - cy) / len;
    const head = `${num(mx)},${num(my)} ${num(mx - 9 * ux + 4 * uy)},${num(my - 9 * uy - 4 * ux)} ${num(mx - 9 * ux - 4 * uy)},${num(my - 9 * uy + 4 * ux)}`;
    inner.push(
      el(
        'g',
        {
          class: 'motion',
          'data-seconds': MOTION_VECTOR_S,
          'data-ra-rate': input.raRate,
          'data-dec-rate': input.decRate,
          'data-length-arcsec': num(Math.hypot(motion.xi, motion.eta), 4),
        },
        el('line', { x1: cx, y1: cy, x2: mx, y2: my, stroke: '#b45f06', 'stroke-width': 2 }) + el('polygon', { points: head, fill: '#b45f06' }),
      ),
    );
    if (panel.name === 'wide') {
      const text = `motion in 10 min: ${formatArcsec(Math.hypot(motion.xi, motion.eta))}`;
      const rightEdge = panel.x0 + PANEL - 8;
      const tx = Math.min(Math.max(mx + 6 * ux + 4, panel.x0 + 8), rightEdge - text.length * 7.4);
      const ty = Math.min(Math.max(my + 6 * uy + 4, panel.y0 + 16), panel.y0 + PANEL - 30);
      inner.push(el('text', { x: tx, y: ty, fill: '#7f3f00', 'paint-order': 'stroke', stroke: '#ffffff', 'stroke-width': 3 }, esc(text)));
    }
  }
  out.push(el('g', { 'clip-path': `url(#${clipId})` }, inner.join('')));
  // Compass, north up and east left.
  const ox = panel.x0 + PANEL - 30;
  const oy = panel.y0 + 50;
  out.push(
    el(
      'g',
      { class: 'compass' },
      el('rect', { x: ox - 50, y: oy - 48, width: 58, height: 58, fill: '#ffffff', 'fill-opacity': 0.8 }) +
        el('line', { x1: ox, y1: oy, x2: ox, y2: oy - 30, stroke: '#000', 'stroke-width': 1.5 }) +
        el('line', { x1: ox, y1: oy, x2: ox - 30, y2: oy, stroke: '#000', 'stroke-width': 1.5 }) +
        el('text', { x: ox - 4, y: oy - 34 }, 'N') +
        el('text', { x: ox - 44, y: oy + 4 }, 'E'),
    ),
  );
  // Scale bar.
  const barArcsec = scaleBarArcsec(panel.extentArcsec * 2);
  const barPx = barArcsec * scale;
  const bx = panel.x0 + 16;
  const by = panel.y0 + PANEL - 18;
  out.push(
    el(
      'g',
      { class: 'scale-bar', 'data-arcsec': barArcsec, 'data-px': num(barPx, 3) },
      el('line', { x1: bx, y1: by, x2: bx + barPx, y2: by, stroke: '#000', 'stroke-width': 3 }) +
        el('line', { x1: bx, y1: by - 5, x2: bx, y2: by + 5, stroke: '#000' }) +
        el('line', { x1: bx + barPx, y1: by - 5, x2: bx + barPx, y2: by + 5, stroke: '#000' }) +
        el('text', { x: bx, y: by - 8 }, esc(`${formatArcsec(barArcsec)} (${num(barArcsec, 3)} arcsec)`)),
    ),
  );
  return el('g', { class: `panel panel-${panel.name}`, 'data-extent-arcsec': num(panel.extentArcsec, 3), 'data-px-per-arcsec': num(scale, 6) }, out.join('\n'));
}
