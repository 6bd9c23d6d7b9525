import type { Site } from '../config/schema.js';
import { evaluateLimits } from '../sky/limits.js';
import { quantile } from '../stats/index.js';
import { LabelPlacer, textBox, textWidthPx, wrapText, type Box } from './layout.js';
import { el, esc, num, svgDocument } from './markup.js';

/**
 * Where to point for one object at one instant, as a picture: the tangent plane around the
 * nominal position, north up and east left (as the sky is seen), with the uncertainty region
 * drawn as the density of the virtual orbits in square cells: the darkest cells together hold
 * 68 % of the virtual orbits, the lighter ones bring that to 99.7 %. Over it: the imager field,
 * the slit at its position angle, the search pattern's pointings when there is one, and the
 * motion over the request's duration. Two panels: a wide one holding the field (and the whole
 * region), and a close one, always at most half as wide, holding the region's core. The
 * picture states the altitude, airmass and Sun altitude at its time and says plainly when
 * the object cannot be observed then (the sky module's hard limits).
 */

const ARCSEC_PER_RAD = (180 / Math.PI) * 3600;
const RAD = Math.PI / 180;
/** Motion drawn when no request gives a duration, s. */
export const DEFAULT_MOTION_S = 600;
/** Cells across a panel for the density: the default, and the bounds of the adaptive choice. */
export const DENSITY_CELLS = 44;
const MIN_CELLS = 12;
const MAX_CELLS = 72;
/** Probability held by the two drawn regions. */
export const REGION_LEVELS = [0.68, 0.997] as const;
/**
 * Radii (in units of the 1-sigma semi-axes) of the ellipses holding 68 % and 99.7 % of a
 * two-dimensional normal distribution: sqrt(-2 ln(1 - p)) (the chi-square distribution with two
 * degrees of freedom, e.g. Press et al., Numerical Recipes, 3rd ed., sect. 15.6.5).
 */
export const NORMAL_REGION_SIGMAS = REGION_LEVELS.map((p) => Math.sqrt(-2 * Math.log(1 - p)));

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

/** A round length for a scale bar, arcsec: 1, 2 or 5 times a power of ten, near a quarter of the extent. */
export function scaleBarArcsec(extentArcsec: number): number {
  requireFinite('extentArcsec', extentArcsec, Number.MIN_VALUE);
  const target = extentArcsec / 4;
  const p = 10 ** Math.floor(Math.log10(target));
  const m = target / p;
  return (m >= 5 ? 5 : m >= 2 ? 2 : 1) * p;
}

/** The sky at the picture's time for the nominal place: the sky module's hard limits. */
export interface PointingConditions {
  altDeg: number;
  /** Kasten & Young (1989); null below the horizon. */
  airmass: number | null;
  sunAltDeg: number;
  observable: boolean;
  /** Why not, in a few plain words each (altitude limits merged), e.g. "the Sun is up (+48.5°)". */
  why: string[];
  /** The failing limits in the sky module's words, e.g. "Sun at -5.2 deg, night needs it below -12 deg". */
  failing: string[];
}

const signed = (x: number) => `${x < 0 ? '−' : '+'}${num(Math.abs(x), 1)}`;

/** The conditions at `timeUtc` for a target at (raDeg, decDeg) with its rates (src/sky/limits.ts, every hard limit). */
export function pointingConditions(site: Site, timeUtc: Date, target: { raDeg: number; decDeg: number; raRate: number; decRate: number }): PointingConditions {
  const report = evaluateLimits(site, timeUtc, { raDeg: target.raDeg, decDeg: target.decDeg, raRateArcsecPerS: target.raRate, decRateArcsecPerS: target.decRate });
  const failing = report.checks.filter((c) => !c.ok);
  const alt = report.target.altDeg;
  const sun = report.sun.altDeg;
  const why: string[] = [];
  for (const c of failing) {
    switch (c.limit) {
      case 'night':
        why.push(sun > 0 ? `the Sun is up (${signed(sun)}°)` : `twilight (Sun at ${signed(sun)}°, night needs it below ${signed(site.limits.nightSunAltitudeDeg)}°)`);
        break;
      case 'minAltitude':
      case 'maxAirmass':
      case 'horizonMask':
        if (!why.some((w) => w.startsWith('too low') || w.startsWith('below the horizon'))) {
          why.push(alt < 0 ? `below the horizon (altitude ${signed(alt)}°)` : `too low (altitude ${num(alt, 1)}°; ${c.detail})`);
        }
        break;
      case 'sunAvoidance':
        why.push(`too close to the Sun (${num(report.sun.separationDeg, 1)}° away, limit ${num(site.limits.sunAvoidanceDeg, 1)}°)`);
        break;
      case 'moonSeparation':
        why.push(`too close to the Moon (${num(report.moon.separationDeg, 1)}° away)`);
        break;
      case 'hourAngle':
        why.push(`hour angle ${signed(report.target.hourAngleH)} h, outside ${num(site.limits.hourAngleH.min, 2)} to ${num(site.limits.hourAngleH.max, 2)} h`);
        break;
      default:
        why.push(c.detail);
    }
  }
  return {
    altDeg: alt,
    airmass: alt > 0 ? report.target.airmass ?? null : null,
    sunAltDeg: sun,
    observable: report.ok,
    why,
    failing: failing.map((c) => c.detail),
  };
}

export interface PointingInput {
  objectId: string;
  siteId: string;
  siteName: string;
  timeUtc: Date;
  /** Why this time, e.g. "the start of the next window (light curve request, score 72.4)". */
  timeReason: string;
  /** 'estimate': the on-demand orbit estimate; 'request-table': interpolated in a request's ephemeris table. */
  positionSource: 'estimate' | 'request-table';
  /** Nominal astrometric ICRS place, deg; rates arcsec/s (RA rate times cos Dec). */
  raDeg: number;
  decDeg: number;
  raRate: number;
  decRate: number;
  vMag: number | null;
  /** 1-sigma ellipse: semi-axes arcsec, position angle of the major axis deg east of north; null when unknown. */
  unc: { major: number; minor: number; pa: number } | null;
  /** Virtual orbits' places, deg; null when there is no ensemble at hand. */
  members: { raDeg: number; decDeg: number }[] | null;
  imagerFieldArcmin: { width: number; height: number };
  /** The slit: width and length arcsec, position angle of its long side deg east of north (and why that angle). */
  slit: { widthArcsec: number; lengthArcsec: number; paDeg: number; paReason: string } | null;
  /** Pointings of the request's search pattern: offsets from the nominal, arcsec (east, north), and the field side. */
  searchPattern: { offsets: { eastArcsec: number; northArcsec: number }[]; fieldArcsec: number } | null;
  /** Motion drawn over this many seconds, and what it is (e.g. "the light curve request's 38 min"). */
  motionS: number;
  motionReason: string;
  conditions: PointingConditions;
}

/** Tangent-plane offsets, arcsec. */
interface Offset {
  xi: number;
  eta: number;
}

export interface DensityCell {
  i: number;
  j: number;
  count: number;
  /** 0: inside the 68 % region, 1: inside 99.7 % only, 2: outside both. */
  level: 0 | 1 | 2;
}

export interface DensityGrid {
  /** Half-width of the square grid, arcsec, centred on the nominal; cell side 2 halfWidth / n. */
  halfWidthArcsec: number;
  n: number;
  cells: DensityCell[];
  /** Members inside the grid, all members, and how many fall inside each region's cells. */
  inside: number;
  total: number;
  heldByLevel: [number, number];
  /** Smoothed density (members per square arcsec) at each region's edge: the levels the regions are drawn at. */
  levels: [number, number];
  /** 'counted': the regions were grown here until they held their share; 'levels': drawn at given density levels. */
  method: 'counted' | 'levels';
}

/**
 * The members' density on an n x n grid of square cells of half-width `halfWidthArcsec` and the
 * regions holding REGION_LEVELS of them. Method (a highest-density region on a histogram): the
 * counts are smoothed with a 3 x 3 binomial kernel only to rank the cells; cells are taken in
 * decreasing smoothed density (ties: nearer the centre first) until their actual counts reach
 * the level's share of all members, so a region holds at least its stated fraction of the
 * members, counted, not modelled. Members outside the grid count toward the total only.
 * With `levels` (the densities at a larger grid's region edges), a grid too small to hold the
 * regions draws them where its smoothed density reaches those levels instead.
 */
export function densityGrid(offsets: readonly Offset[], halfWidthArcsec: number, n = DENSITY_CELLS, levels?: readonly [number, number]): DensityGrid {
  requireFinite('halfWidthArcsec', halfWidthArcsec, Number.MIN_VALUE);
  const side = (2 * halfWidthArcsec) / n;
  const area = side * side;
  const counts = new Float64Array(n * n);
  let inside = 0;
  for (const o of offsets) {
    // Column i runs east to west (xi decreasing, as drawn), row j north to south.
    const i = Math.floor((halfWidthArcsec - o.xi) / side);
    const j = Math.floor((halfWidthArcsec - o.eta) / side);
    if (i < 0 || j < 0 || i >= n || j >= n) continue;
    counts[j * n + i]! += 1;
    inside++;
  }
  const smooth = new Float64Array(n * n);
  const kernel = [1, 2, 1];
  for (let j = 0; j < n; j++) {
    for (let i = 0; i < n; i++) {
      let s = 0;
      for (let dj = -1; dj <= 1; dj++) {
        for (let di = -1; di <= 1; di++) {
          const ii = i + di;
          const jj = j + dj;
          if (ii < 0 || jj < 0 || ii >= n || jj >= n) continue;
          s += kernel[di + 1]! * kernel[dj + 1]! * counts[jj * n + ii]!;
        }
      }
      smooth[j * n + i] = s / 16 / area;
    }
  }
  const total = offsets.length;
  const level = new Uint8Array(n * n).fill(2);
  const held: [number, number] = [0, 0];
  const edge: [number, number] = [0, 0];
  const counted = levels === undefined || inside >= REGION_LEVELS[1] * total;
  if (counted) {
    const order = Array.from({ length: n * n }, (_, k) => k)
      .filter((k) => smooth[k]! > 0)
      .sort((a, b) => smooth[b]! - smooth[a]! || distance2(a, n) - distance2(b, n));
    let cumulative = 0;
    for (const k of order) {
      if (cumulative >= REGION_LEVELS[1] * total) break;
      const lv = cumulative < REGION_LEVELS[0] * total ? 0 : 1;
      level[k] = lv;
      cumulative += counts[k]!;
      edge[lv] = smooth[k]!;
      if (lv === 0) edge[1] = smooth[k]!;
    }
  } else {
    edge[0] = levels[0];
    edge[1] = levels[1];
    for (let k = 0; k < n * n; k++) {
      if (smooth[k]! <= 0) continue;
      if (smooth[k]! >= levels[0]) level[k] = 0;
      else if (smooth[k]! >= levels[1]) level[k] = 1;
    }
  }
  const cells: DensityCell[] = [];
  for (let k = 0; k < n * n; k++) {
    if (level[k]! < 2) {
      held[1] += counts[k]!;
      if (level[k] === 0) held[0] += counts[k]!;
    }
    if (counts[k]! > 0 || level[k]! < 2) cells.push({ i: k % n, j: Math.floor(k / n), count: counts[k]!, level: level[k] as 0 | 1 | 2 });
  }
  return { halfWidthArcsec, n, cells, inside, total, heldByLevel: held, levels: edge, method: counted ? 'counted' : 'levels' };
}

/**
 * A cell side for the members' density, arcsec: the side at which the ellipse holding 99.7 % of a
 * normal distribution with the members' covariance (area pi 11.6 sqrt(det C), Numerical Recipes
 * sect. 15.6.5) would be tiled by about one cell per four members, so a cell holds a few of
 * them on average (a choice for legibility, common practice for histograms).
 */
export function densityCellArcsec(offsets: readonly Offset[]): number {
  const n = offsets.length;
  if (n === 0) return 1;
  let mx = 0;
  let my = 0;
  for (const o of offsets) {
    mx += o.xi / n;
    my += o.eta / n;
  }
  let sxx = 0;
  let syy = 0;
  let sxy = 0;
  for (const o of offsets) {
    sxx += (o.xi - mx) ** 2 / n;
    syy += (o.eta - my) ** 2 / n;
    sxy += ((o.xi - mx) * (o.eta - my)) / n;
  }
  const det = Math.max(sxx * syy - sxy * sxy, 0);
  // A cloud along a line has no area: give it the width of a thousandth of its length.
  const area = Math.PI * NORMAL_REGION_SIGMAS[1]! ** 2 * Math.max(Math.sqrt(det), 1e-3 * (sxx + syy));
  return Math.max(Math.sqrt(area / Math.max(1, n / 4)), 1e-3);
}

function distance2(k: number, n: number): number {
  const i = (k % n) - (n - 1) / 2;
  const j = Math.floor(k / n) - (n - 1) / 2;
  return i * i + j * j;
}

function formatArcsec(a: number): string {
  if (a >= 3600) return `${num(a / 3600, 2)}°`;
  if (a >= 120) return `${num(a / 60, 1)}′`;
  return `${num(a, a < 1 ? 2 : a < 10 ? 1 : 0)}″`;
}

/** RA as 10h00m48.00s or Dec as +22°06′00.0″. */
export function sexagesimal(value: number, hours: boolean): string {
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

export interface PanelScales {
  /** Half-widths, arcsec; close is at most half of wide. */
  wideArcsec: number;
  closeArcsec: number;
}

/**
 * The two panels' half-widths, arcsec. Wide: 1.1 x the largest of the imager field's half
 * diagonal, half the slit, the search pattern's reach and the 99.7 % radius of the region
 * (not the motion: a fast object's hours of motion would shrink the field to a dot; its arrow
 * leaves the view and its label gives its length). Close: 1.2 x the region's 99.7 % radius
 * (at least 2 arcsec and twice the slit width), but never more than half the wide one, so the
 * close view is always the smaller.
 */
export function panelScales(input: { halfFieldArcsec: number; slitHalfLengthArcsec: number; slitWidthArcsec: number; patternReachArcsec: number; region997Arcsec: number }): PanelScales {
  const wideArcsec = 1.1 * Math.max(input.halfFieldArcsec, input.slitHalfLengthArcsec, input.patternReachArcsec, input.region997Arcsec, 1);
  const closeArcsec = Math.min(1.2 * Math.max(input.region997Arcsec, 2, 2 * input.slitWidthArcsec), wideArcsec / 2);
  return { wideArcsec, closeArcsec };
}

const WIDTH = 940;
const PANEL = 420;
const MARGIN = 30;
const FONT = 11;

/** Renders the picture as a standalone SVG document. */
export function renderPointingChart(input: PointingInput): string {
  requireFinite('raDeg', input.raDeg, 0, 360);
  requireFinite('decDeg', input.decDeg, -90, 90);
  requireFinite('raRate', input.raRate);
  requireFinite('decRate', input.decRate);
  requireFinite('motionS', input.motionS, 0);
  if (input.unc) {
    requireFinite('unc.major', input.unc.major, 0);
    requireFinite('unc.minor', input.unc.minor, 0);
    requireFinite('unc.pa', input.unc.pa);
  }
  const members = (input.members ?? []).map((m) => tangentPlaneArcsec(input.raDeg, input.decDeg, m.raDeg, m.decDeg));
  const motion = { xi: input.raRate * input.motionS, eta: input.decRate * input.motionS };
  const motionLen = Math.hypot(motion.xi, motion.eta);
  const radii = members.map((m) => Math.hypot(m.xi, m.eta));
  const region997 = members.length > 0 ? quantile(radii, REGION_LEVELS[1]) : input.unc ? NORMAL_REGION_SIGMAS[1]! * input.unc.major : 0;
  const fieldW = input.imagerFieldArcmin.width * 60;
  const fieldH = input.imagerFieldArcmin.height * 60;
  const pattern = input.searchPattern;
  const patternReach = pattern ? Math.max(...pattern.offsets.map((o) => Math.hypot(o.eastArcsec, o.northArcsec) + (pattern.fieldArcsec * Math.SQRT2) / 2)) : 0;
  const scales = panelScales({
    halfFieldArcsec: Math.hypot(fieldW, fieldH) / 2,
    slitHalfLengthArcsec: input.slit ? input.slit.lengthArcsec / 2 : 0,
    slitWidthArcsec: input.slit?.widthArcsec ?? 0,
    patternReachArcsec: patternReach,
    region997Arcsec: region997,
  });

  const placer = new LabelPlacer();
  const parts: string[] = [];
  const textWidth = WIDTH - 2 * MARGIN;
  let y = 26;
  const line = (words: string, options: { size?: number; bold?: boolean; fill?: string; cls?: string } = {}) => {
    const size = options.size ?? 12;
    for (const piece of wrapText(words, textWidth, size, options.bold ?? false)) {
      placer.reserve(textBox(piece, MARGIN, y, size, 'start', options.bold ?? false));
      parts.push(el('text', { x: MARGIN, y, 'font-size': size, 'font-weight': options.bold ? 'bold' : null, fill: options.fill ?? null, class: options.cls ?? null }, esc(piece)));
      y += size + 5;
    }
  };
  const when = `${input.timeUtc.toISOString().slice(0, 19)}Z`;
  line(`${input.objectId}: where to point from ${input.siteName} at ${when.slice(11, 16)} UTC on ${when.slice(0, 10)}`, { size: 16, bold: true });
  line(`Drawn for ${when}: ${input.timeReason}.`);
  const c = input.conditions;
  const then = `altitude ${num(c.altDeg, 1)}°, airmass ${c.airmass === null ? 'none (below the horizon)' : num(c.airmass, 2)}, Sun altitude ${num(c.sunAltDeg, 1)}°`;
  if (c.observable) line(`Then: ${then}; observable within every hard limit.`, { cls: 'conditions' });
  else {
    line(`NOT OBSERVABLE at ${when.slice(11, 16)} UTC: ${c.why.join('; ')}.`, { bold: true, fill: '#9c1c1c', cls: 'conditions not-observable' });
    line(`Then: ${then}. Failing limits: ${c.failing.join('; ')}.`, { size: 11, fill: '#6b1414' });
  }
  line(
    `Nominal RA ${sexagesimal(input.raDeg, true)} Dec ${sexagesimal(input.decDeg, false)} (ICRS astrometric; ${num(input.raDeg, 5)}°, ${num(input.decDeg, 5)}°)` +
      (input.vMag !== null ? `, V ${num(input.vMag, 1)}` : '') +
      `; rates RA×cos Dec ${num(input.raRate, 4)}″/s, Dec ${num(input.decRate, 4)}″/s; position from ${input.positionSource === 'estimate' ? 'the orbit estimate' : 'the request’s ephemeris table'}.`,
  );
  const grids = new Map<'wide' | 'close', DensityGrid>();
  if (members.length > 0) {
    const cell = densityCellArcsec(members);
    const cellsAcross = (half: number) => Math.min(MAX_CELLS, Math.max(MIN_CELLS, Math.round((2 * half) / cell)));
    const wide = densityGrid(members, scales.wideArcsec, cellsAcross(scales.wideArcsec));
    grids.set('wide', wide);
    grids.set('close', densityGrid(members, scales.closeArcsec, cellsAcross(scales.closeArcsec), wide.levels));
  }
  const uncWords = input.unc ? `1σ ellipse ${num(input.unc.major, 2)}″ × ${num(input.unc.minor, 2)}″ at PA ${num(input.unc.pa, 1)}°` : 'no 1σ ellipse';
  if (members.length > 0) {
    line(`Uncertainty from ${members.length} virtual orbits: the dark cells hold 68 % of them, the dark and light cells together 99.7 % (${uncWords}, for comparison).`);
  } else if (input.unc) {
    line(`Uncertainty: ${uncWords}; no virtual orbits at hand, so the regions holding 68 % and 99.7 % are drawn for a normal distribution with that ellipse.`);
  } else line('Uncertainty unknown: no virtual orbits and no ellipse.');

  const panelTop = y + 26;
  const closeHoldsRegion = 1.2 * region997 <= scales.closeArcsec * (1 + 1e-9);
  const panels = [
    { name: 'wide' as const, x0: MARGIN, half: scales.wideArcsec, heading: `Wide view, ${formatArcsec(2 * scales.wideArcsec)} across: the imager field` },
    {
      name: 'close' as const,
      x0: WIDTH - MARGIN - PANEL,
      half: scales.closeArcsec,
      heading: `Close view, ${formatArcsec(2 * scales.closeArcsec)} across: ${closeHoldsRegion ? 'the uncertainty region' : 'the region’s core (it reaches beyond)'}`,
    },
  ];
  const notes: string[] = [];
  for (const panel of panels) {
    parts.push(renderPanel({ ...panel, y0: panelTop }, input, motion, grids.get(panel.name) ?? null, placer, notes));
  }
  y = panelTop + PANEL + 28;
  const extra = [
    ...notes,
    'North up, east left, as the sky is seen; offsets on the tangent plane (gnomonic projection) around the nominal position.',
    `Imager field ${num(input.imagerFieldArcmin.width, 1)}′ × ${num(input.imagerFieldArcmin.height, 1)}′, sides north-south and east-west.` +
      (input.slit ? ` Slit ${num(input.slit.widthArcsec, 1)}″ × ${num(input.slit.lengthArcsec, 0)}″ at PA ${num(input.slit.paDeg, 1)}° (${input.slit.paReason}).` : ' No spectrograph at this site.') +
      (pattern ? ` Search pattern: ${pattern.offsets.length} pointings of ${formatArcsec(pattern.fieldArcsec)}, numbered nearest first.` : ''),
    `Motion: a straight line at the rates above over ${input.motionReason} (${formatArcsec(motionLen)}).`,
    'Positions are estimates with uncertainty, not impact predictions; the observatory decides what runs.',
  ];
  for (const n of extra) line(n, { size: 11, fill: '#333' });

  return svgDocument({
    widthPx: WIDTH,
    heightPx: Math.ceil(y + 4),
    className: 'pointing-chart',
    title: `${input.objectId} from ${input.siteName} at ${input.timeUtc.toISOString()}`,
    desc:
      `Tangent-plane view, north up and east left, around RA ${num(input.raDeg, 5)} deg, Dec ${num(input.decDeg, 5)} deg. ` +
      (c.observable ? `Observable then: altitude ${num(c.altDeg, 1)} deg. ` : `Not observable then: ${c.failing.join('; ')}. `) +
      (members.length > 0 ? `${members.length} virtual orbits drawn as density; ` : '') +
      `${uncWords}. Motion ${num(motionLen, 1)} arcsec over ${input.motionReason}. ` +
      `Wide panel ${formatArcsec(2 * scales.wideArcsec)} across, close panel ${formatArcsec(2 * scales.closeArcsec)} across.`,
    data: {
      'data-object-id': input.objectId,
      'data-site-id': input.siteId,
      'data-t': input.timeUtc.toISOString(),
      'data-ra-deg': input.raDeg,
      'data-dec-deg': input.decDeg,
      'data-ra-rate': input.raRate,
      'data-dec-rate': input.decRate,
      'data-position-source': input.positionSource,
      'data-alt-deg': c.altDeg,
      'data-airmass': c.airmass,
      'data-sun-alt-deg': c.sunAltDeg,
      'data-observable': c.observable ? 'true' : 'false',
      'data-unc-major-arcsec': input.unc?.major ?? null,
      'data-unc-minor-arcsec': input.unc?.minor ?? null,
      'data-unc-pa-deg': input.unc?.pa ?? null,
      'data-members': members.length,
    },
    body: parts.join('\n'),
  });
}

interface PanelPlace {
  name: 'wide' | 'close';
  x0: number;
  y0: number;
  half: number;
  heading: string;
}

const REGION_STYLE = [
  { fill: '#4b2a7b', opacity: 0.62, stroke: '#2e1650', dash: null, words: '68 %' },
  { fill: '#4b2a7b', opacity: 0.24, stroke: '#4b2a7b', dash: '4 3', words: '99.7 %' },
] as const;

function renderPanel(panel: PanelPlace, input: PointingInput, motion: Offset, grid: DensityGrid | null, placer: LabelPlacer, notes: string[]): string {
  const scale = PANEL / 2 / panel.half; // px per arcsec
  const cx = panel.x0 + PANEL / 2;
  const cy = panel.y0 + PANEL / 2;
  // East left: screen x decreases with xi; north up: screen y decreases with eta.
  const sx = (xi: number) => cx - xi * scale;
  const sy = (eta: number) => cy - eta * scale;
  // A position angle (deg east of north) as the SVG rotation that turns the x axis onto it.
  const rotationFor = (paDeg: number) => -(90 + paDeg);
  const bounds: Box = { x: panel.x0 + 2, y: panel.y0 + 2, w: PANEL - 4, h: PANEL - 4 };
  const clipId = `pointing-${panel.name}`;
  const out: string[] = [];
  const labels: string[] = [];
  /**
   * Asks for a label at the first free candidate (each the top-left corner of its box), or says it
   * in the notes. Labels are placed after everything is drawn, so they avoid every drawn line.
   */
  const pending: (() => void)[] = [];
  const label = (words: string, candidates: readonly { x: number; y: number }[], fill: string, cls: string, missing: string) => {
    pending.push(() => {
      const boxes = candidates.map((p) => textBox(words, p.x, p.y + 0.93 * FONT, FONT));
      const chosen = placer.place(boxes, bounds);
      if (!chosen) {
        notes.push(`${panel.name === 'wide' ? 'Wide' : 'Close'} view: ${missing}.`);
        return;
      }
      labels.push(el('text', { x: chosen.x, y: chosen.y + 0.93 * FONT, 'font-size': FONT, fill, class: `label ${cls}`, 'paint-order': 'stroke', stroke: '#ffffff', 'stroke-width': 3 }, esc(words)));
    });
  };

  out.push(el('defs', {}, el('clipPath', { id: clipId }, el('rect', { x: panel.x0, y: panel.y0, width: PANEL, height: PANEL }))));
  out.push(el('rect', { x: panel.x0, y: panel.y0, width: PANEL, height: PANEL, fill: '#f7f8fb', stroke: '#333' }));
  placer.reserve(textBox(panel.heading, panel.x0, panel.y0 - 8, 12, 'start', true));
  labels.push(el('text', { x: panel.x0, y: panel.y0 - 8, 'font-size': 12, 'font-weight': 'bold' }, esc(panel.heading)));
  /** Keeps labels off a line from (x1, y1) to (x2, y2), in short boxes along it. */
  const avoidLine = (x1: number, y1: number, x2: number, y2: number) => {
    const steps = Math.max(1, Math.ceil(Math.hypot(x2 - x1, y2 - y1) / 12));
    for (let k = 0; k < steps; k++) {
      const ax = x1 + ((x2 - x1) * k) / steps;
      const ay = y1 + ((y2 - y1) * k) / steps;
      const bx = x1 + ((x2 - x1) * (k + 1)) / steps;
      const by = y1 + ((y2 - y1) * (k + 1)) / steps;
      const box = { x: Math.min(ax, bx) - 2, y: Math.min(ay, by) - 2, w: Math.abs(bx - ax) + 4, h: Math.abs(by - ay) + 4 };
      if (box.x + box.w > bounds.x && box.x < bounds.x + bounds.w && box.y + box.h > bounds.y && box.y < bounds.y + bounds.h) placer.reserve(box);
    }
  };

  const inner: string[] = [];
  // The slit's light fill goes under the density; its outline is drawn over it below.
  const slitRect = (extra: Record<string, string | number | null>) => {
    if (!input.slit) return '';
    const { widthArcsec: w, lengthArcsec: l, paDeg } = input.slit;
    return el('rect', {
      x: cx - (l / 2) * scale,
      y: cy - (w / 2) * scale,
      width: l * scale,
      height: Math.max(w * scale, 1),
      transform: `rotate(${num(rotationFor(paDeg), 3)} ${num(cx)} ${num(cy)})`,
      ...extra,
    });
  };
  if (input.slit) inner.push(slitRect({ fill: '#6aa84f', 'fill-opacity': 0.18, stroke: 'none' }));
  // The density, or the normal regions of the ellipse.
  if (grid) {
    const side = (2 * grid.halfWidthArcsec) / grid.n;
    const sidePx = side * scale;
    const left = cx - grid.halfWidthArcsec * scale;
    const top = cy - grid.halfWidthArcsec * scale;
    const maxCount = Math.max(1, ...grid.cells.map((c) => c.count));
    const cells = grid.cells.map((c) => {
      const style = c.level === 2 ? { fill: '#4b2a7b', opacity: 0.08 } : REGION_STYLE[c.level];
      // Within a level, a little more ink for more members, so the density reads inside a region.
      const opacity = style.opacity * (0.75 + 0.25 * Math.sqrt(c.count / maxCount));
      return el('rect', { x: left + c.i * sidePx, y: top + c.j * sidePx, width: sidePx + 0.2, height: sidePx + 0.2, fill: style.fill, 'fill-opacity': num(opacity, 3), 'data-count': c.count, 'data-level': c.level });
    });
    inner.push(
      el(
        'g',
        {
          class: 'density',
          'data-cells': grid.n,
          'data-cell-arcsec': side,
          'data-members-total': grid.total,
          'data-members-inside': grid.inside,
          'data-held-68': grid.heldByLevel[0],
          'data-held-997': grid.heldByLevel[1],
        },
        cells.join(''),
      ),
    );
    for (const level of [1, 0] as const) inner.push(regionOutline(grid, level, left, top, sidePx));
    if (grid.method === 'levels') {
      notes.push(
        `${panel.name === 'wide' ? 'Wide' : 'Close'} view: ${grid.total - grid.inside} of ${grid.total} virtual orbits lie beyond its edges, so its regions are drawn at the wide view’s density levels.`,
      );
    }
  } else if (input.unc) {
    const { major, minor, pa } = input.unc;
    [1, 0].forEach((level) => {
      const k = NORMAL_REGION_SIGMAS[level]!;
      const style = REGION_STYLE[level as 0 | 1];
      inner.push(
        el('ellipse', {
          class: `normal-region region-${level === 0 ? '68' : '997'}`,
          'data-level': REGION_LEVELS[level]!,
          'data-major-arcsec': k * major,
          'data-minor-arcsec': k * minor,
          'data-pa-deg': pa,
          cx,
          cy,
          rx: Math.max(k * major * scale, 0.5),
          ry: Math.max(k * minor * scale, 0.5),
          transform: `rotate(${num(rotationFor(pa), 3)} ${num(cx)} ${num(cy)})`,
          fill: style.fill,
          'fill-opacity': style.opacity,
          stroke: style.stroke,
          'stroke-dasharray': style.dash,
        }),
      );
    });
  }
  // Crosshair at the nominal position.
  inner.push(el('g', { class: 'nominal' }, el('line', { x1: cx - 7, x2: cx + 7, y1: cy, y2: cy, stroke: '#000' }) + el('line', { x1: cx, x2: cx, y1: cy - 7, y2: cy + 7, stroke: '#000' })));
  placer.reserve({ x: cx - 8, y: cy - 8, w: 16, h: 16 });

  // Search pattern pointings, numbered nearest first (numbers top-left inside each).
  const pattern = input.searchPattern;
  if (pattern) {
    const f = pattern.fieldArcsec * scale;
    pattern.offsets.forEach((o, k) => {
      const px = sx(o.eastArcsec);
      const py = sy(o.northArcsec);
      inner.push(el('rect', { class: 'search-pointing', 'data-index': k + 1, 'data-east-arcsec': o.eastArcsec, 'data-north-arcsec': o.northArcsec, x: px - f / 2, y: py - f / 2, width: f, height: f, fill: 'none', stroke: '#0b6e4f', 'stroke-width': 1, 'stroke-dasharray': '6 3' }));
      if (panel.name === 'wide') label(String(k + 1), [{ x: px - f / 2 + 3, y: py - f / 2 + 3 }, { x: px + f / 2 - 12, y: py - f / 2 + 3 }, { x: px - f / 2 + 3, y: py + f / 2 - 15 }], '#0b6e4f', 'pattern-number', `search pointing ${k + 1} is not numbered (no room)`);
    });
  }

  // Imager field.
  const fw = input.imagerFieldArcmin.width * 60;
  const fh = input.imagerFieldArcmin.height * 60;
  const fx = cx - (fw / 2) * scale;
  const fy = cy - (fh / 2) * scale;
  inner.push(el('rect', { class: 'imager-field', 'data-width-arcsec': fw, 'data-height-arcsec': fh, x: fx, y: fy, width: fw * scale, height: fh * scale, fill: 'none', stroke: '#1f4e79', 'stroke-width': 1.5 }));
  avoidLine(fx, fy, fx + fw * scale, fy);
  avoidLine(fx, fy + fh * scale, fx + fw * scale, fy + fh * scale);
  avoidLine(fx, fy, fx, fy + fh * scale);
  avoidLine(fx + fw * scale, fy, fx + fw * scale, fy + fh * scale);
  if (panel.name === 'wide') {
    const words = `imager field ${num(input.imagerFieldArcmin.width, 1)}′ × ${num(input.imagerFieldArcmin.height, 1)}′`;
    label(words, [{ x: fx + 4, y: fy + 4 }, { x: fx + 4, y: fy + fh * scale - 18 }, { x: fx + 4, y: fy - 18 }, { x: fx + 4, y: fy + fh * scale + 4 }], '#1f4e79', 'field-label', 'the imager field is the blue square');
  }

  // Slit at its position angle.
  if (input.slit) {
    const { widthArcsec: w, lengthArcsec: l, paDeg } = input.slit;
    inner.push(slitRect({ class: 'slit', 'data-width-arcsec': w, 'data-length-arcsec': l, 'data-pa-deg': paDeg, fill: 'none', stroke: '#274e13', 'stroke-width': 1.2 }));
    const ends = [1, -1].map((s) => ({ x: sx(s * (l / 2) * Math.sin(paDeg * RAD)), y: sy(s * (l / 2) * Math.cos(paDeg * RAD)) }));
    avoidLine(ends[0]!.x, ends[0]!.y, ends[1]!.x, ends[1]!.y);
    const words = `slit ${num(w, 1)}″, PA ${num(paDeg, 0)}°`;
    const width = textWidthPx(words, FONT);
    // Near its ends, or where it leaves the view when it is longer than the view.
    const visible = Math.min(l / 2, 0.85 * panel.half);
    const along = [1, -1, 0.6, -0.6].map((f) => ({ x: sx(f * visible * Math.sin(paDeg * RAD)), y: sy(f * visible * Math.cos(paDeg * RAD)) }));
    const su = { x: -Math.sin(paDeg * RAD), y: -Math.cos(paDeg * RAD) };
    label(
      words,
      [...along.flatMap((q) => besideLine(q, su.x, su.y, width, 1.17 * FONT)), ...[...ends, ...along].flatMap((e) => [
        { x: e.x + 6, y: e.y - 16 },
        { x: e.x + 6, y: e.y + 4 },
        { x: e.x - 6 - width, y: e.y - 16 },
        { x: e.x - 6 - width, y: e.y + 4 },
      ])],
      '#274e13',
      'slit-label',
      'the slit is the green outline',
    );
  }

  // Motion over the request's duration.
  const mx = sx(motion.xi);
  const my = sy(motion.eta);
  const len = Math.hypot(mx - cx, my - cy);
  const motionLen = Math.hypot(motion.xi, motion.eta);
  if (len > 3) {
    const ux = (mx - cx) / len;
    const uy = (my - cy) / len;
    const head = `${num(mx)},${num(my)} ${num(mx - 9 * ux + 4 * uy)},${num(my - 9 * uy - 4 * ux)} ${num(mx - 9 * ux - 4 * uy)},${num(my - 9 * uy + 4 * ux)}`;
    inner.push(
      el(
        'g',
        { class: 'motion', 'data-seconds': input.motionS, 'data-ra-rate': input.raRate, 'data-dec-rate': input.decRate, 'data-length-arcsec': motionLen },
        el('line', { x1: cx, y1: cy, x2: mx, y2: my, stroke: '#b45f06', 'stroke-width': 2 }) + el('polygon', { points: head, fill: '#b45f06' }),
      ),
    );
    avoidLine(cx, cy, mx, my);
    const words = `motion ${formatArcsec(motionLen)}`;
    const width = textWidthPx(words, FONT);
    // Beyond the arrow's head first, then beside the shaft where it is in view, on either side.
    const beyond = { x: mx + 10 * ux - (ux < 0 ? width : 0), y: my + 10 * uy - (uy < 0 ? 13 : 0) };
    let reach = len;
    while (reach > 20 && !(cx + ux * reach > bounds.x + 10 && cx + ux * reach < bounds.x + bounds.w - 10 && cy + uy * reach > bounds.y + 10 && cy + uy * reach < bounds.y + bounds.h - 10)) reach *= 0.9;
    const beside = [0.9, 0.7, 0.5, 0.3].flatMap((f) => besideLine({ x: cx + ux * reach * f, y: cy + uy * reach * f }, ux, uy, width, 1.17 * FONT));
    label(
      words,
      [beyond, ...beside],
      '#7f3f00',
      'motion-label',
      `the motion (${formatArcsec(motionLen)}) is the brown arrow`,
    );
  } else {
    notes.push(`${panel.name === 'wide' ? 'Wide' : 'Close'} view: the motion, ${formatArcsec(motionLen)}, is too small to draw.`);
  }

  // Region labels in the close view, beside each region's extreme points on screen.
  if (panel.name === 'close') {
    for (const level of [0, 1] as const) {
      const extremes = grid ? gridExtremes(grid, level, cx, cy, scale) : input.unc ? ellipseExtremes(input.unc, NORMAL_REGION_SIGMAS[level]!, cx, cy, scale) : null;
      if (!extremes) continue;
      const words = REGION_STYLE[level].words;
      const width = textWidthPx(words, FONT);
      const { right, left, top, bottom } = extremes;
      label(
        words,
        [
          { x: right.x + 4, y: right.y - 14 },
          { x: left.x - 4 - width, y: left.y - 14 },
          { x: top.x - width / 2, y: top.y - 16 },
          { x: bottom.x - width / 2, y: bottom.y + 3 },
          { x: right.x + 4, y: right.y + 2 },
          { x: left.x - 4 - width, y: left.y + 2 },
        ],
        '#2e1650',
        `region-label region-${level === 0 ? '68' : '997'}`,
        `the ${words} region is not labelled (no room)`,
      );
    }
  }

  out.push(el('g', { 'clip-path': `url(#${clipId})` }, inner.join('')));

  // Compass, north up and east left (its box kept clear of labels).
  const ox = panel.x0 + PANEL - 22;
  const oy = panel.y0 + 44;
  out.push(
    el(
      'g',
      { class: 'compass' },
      el('rect', { x: ox - 44, y: oy - 40, width: 52, height: 50, fill: '#ffffff', 'fill-opacity': 0.85 }) +
        el('line', { x1: ox, y1: oy, x2: ox, y2: oy - 24, stroke: '#000', 'stroke-width': 1.5 }) +
        el('line', { x1: ox, y1: oy, x2: ox - 24, y2: oy, stroke: '#000', 'stroke-width': 1.5 }) +
        el('text', { x: ox - 4, y: oy - 28, 'font-size': FONT }, 'N') +
        el('text', { x: ox - 38, y: oy + 4, 'font-size': FONT }, 'E'),
    ),
  );
  placer.reserve({ x: ox - 44, y: oy - 40, w: 52, h: 50 });
  // Scale bar.
  const barArcsec = scaleBarArcsec(panel.half * 2);
  const barPx = barArcsec * scale;
  const bx = panel.x0 + 14;
  const by = panel.y0 + PANEL - 14;
  const barWords = `${formatArcsec(barArcsec)} (${num(barArcsec, 3)} arcsec)`;
  placer.reserve({ x: bx - 2, y: by - 22, w: Math.max(barPx, barWords.length * 6.6) + 6, h: 30 });
  out.push(
    el(
      'g',
      { class: 'scale-bar', 'data-arcsec': barArcsec, 'data-px': barPx },
      el('rect', { x: bx - 4, y: by - 22, width: Math.max(barPx, barWords.length * 6.6) + 8, height: 30, fill: '#ffffff', 'fill-opacity': 0.85 }) +
        el('line', { x1: bx, y1: by, x2: bx + barPx, y2: by, stroke: '#000', 'stroke-width': 3 }) +
        el('line', { x1: bx, y1: by - 5, x2: bx, y2: by + 5, stroke: '#000' }) +
        el('line', { x1: bx + barPx, y1: by - 5, x2: bx + barPx, y2: by + 5, stroke: '#000' }) +
        el('text', { x: bx, y: by - 8, 'font-size': FONT }, esc(barWords)),
    ),
  );
  for (const place of pending) place();
  out.push(labels.join(''));
  return el('g', { class: `panel panel-${panel.name}`, 'data-extent-arcsec': panel.half, 'data-px-per-arcsec': scale }, out.join('\n'));
}

/** Top-left corners of a w x h box beside the line through `p` with direction (ux, uy), 6 px clear of it, on each side. */
function besideLine(p: { x: number; y: number }, ux: number, uy: number, w: number, h: number): { x: number; y: number }[] {
  const nx = -uy;
  const ny = ux;
  const reach = 6 + (Math.abs(nx) * w + Math.abs(ny) * h) / 2;
  return [1, -1].map((side) => ({ x: p.x + side * nx * reach - w / 2, y: p.y + side * ny * reach - h / 2 }));
}

interface Extremes {
  right: { x: number; y: number };
  left: { x: number; y: number };
  top: { x: number; y: number };
  bottom: { x: number; y: number };
}

/** The screen points of a region's cells furthest right, left, up and down (cell corners on its outline). */
function gridExtremes(grid: DensityGrid, level: 0 | 1, cx: number, cy: number, scale: number): Extremes | null {
  const cells = grid.cells.filter((c) => c.level <= level);
  if (cells.length === 0) return null;
  const side = ((2 * grid.halfWidthArcsec) / grid.n) * scale;
  const x0 = cx - grid.halfWidthArcsec * scale;
  const y0 = cy - grid.halfWidthArcsec * scale;
  const pick = (better: (a: DensityCell, b: DensityCell) => boolean) => cells.reduce((a, b) => (better(b, a) ? b : a));
  const r = pick((a, b) => a.i > b.i);
  const l = pick((a, b) => a.i < b.i);
  const t = pick((a, b) => a.j < b.j);
  const b = pick((a, c) => a.j > c.j);
  return {
    right: { x: x0 + (r.i + 1) * side, y: y0 + (r.j + 0.5) * side },
    left: { x: x0 + l.i * side, y: y0 + (l.j + 0.5) * side },
    top: { x: x0 + (t.i + 0.5) * side, y: y0 + t.j * side },
    bottom: { x: x0 + (b.i + 0.5) * side, y: y0 + (b.j + 1) * side },
  };
}

/** The screen points of the ellipse k x the 1-sigma one furthest right, left, up and down (sampled every 5 deg). */
function ellipseExtremes(unc: { major: number; minor: number; pa: number }, k: number, cx: number, cy: number, scale: number): Extremes {
  const theta = -(90 + unc.pa) * RAD;
  const rx = k * unc.major * scale;
  const ry = k * unc.minor * scale;
  const pts = Array.from({ length: 72 }, (_, i) => {
    const t = (i * 5 * Math.PI) / 180;
    const u = rx * Math.cos(t);
    const v = ry * Math.sin(t);
    return { x: cx + u * Math.cos(theta) - v * Math.sin(theta), y: cy + u * Math.sin(theta) + v * Math.cos(theta) };
  });
  const pick = (better: (a: { x: number; y: number }, b: { x: number; y: number }) => boolean) => pts.reduce((a, b) => (better(b, a) ? b : a));
  return { right: pick((a, b) => a.x > b.x), left: pick((a, b) => a.x < b.x), top: pick((a, b) => a.y < b.y), bottom: pick((a, b) => a.y > b.y) };
}

/** The outline of the cells at `level` or lower (68 %: level 0; 99.7 %: levels 0 and 1), as one path of cell edges. */
function regionOutline(grid: DensityGrid, level: 0 | 1, left: number, top: number, sidePx: number): string {
  const n = grid.n;
  const inside = new Uint8Array(n * n);
  for (const c of grid.cells) if (c.level <= level) inside[c.j * n + c.i] = 1;
  const at = (i: number, j: number) => i >= 0 && j >= 0 && i < n && j < n && inside[j * n + i] === 1;
  let d = '';
  const px = (i: number) => num(left + i * sidePx);
  const py = (j: number) => num(top + j * sidePx);
  for (let j = 0; j < n; j++) {
    for (let i = 0; i < n; i++) {
      if (!at(i, j)) continue;
      if (!at(i, j - 1)) d += `M${px(i)} ${py(j)}H${px(i + 1)}`;
      if (!at(i, j + 1)) d += `M${px(i)} ${py(j + 1)}H${px(i + 1)}`;
      if (!at(i - 1, j)) d += `M${px(i)} ${py(j)}V${py(j + 1)}`;
      if (!at(i + 1, j)) d += `M${px(i + 1)} ${py(j)}V${py(j + 1)}`;
    }
  }
  if (d === '') return '';
  const style = REGION_STYLE[level];
  return el('path', { class: `region-outline region-${level === 0 ? '68' : '997'}`, d, fill: 'none', stroke: style.stroke, 'stroke-width': level === 0 ? 1.6 : 1.2, 'stroke-dasharray': style.dash });
}
