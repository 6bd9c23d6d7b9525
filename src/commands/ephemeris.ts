import { loadConfig } from '../config/load.js';
import { rangingFor, type RangePriorChoice } from '../planning/assess.js';
import { locationSchema, RANGE_PRIOR_CHOICES, type GeodeticLocation } from '../config/schema.js';
import type { Notice, NoticeOrbit } from '../intake/notice.js';
import type { EphemerisRow } from '../orbit/ephemeris.js';
import type { Percentiles } from '../orbit/estimate-types.js';
import type { PerihelionElements } from '../orbit/elements.js';
import { ttFromTtIso } from '../orbit/time.js';
import { DEFAULT_MEMBERS, estimateObject } from '../orbit/estimation/index.js';
import { parseCommandArgs, parseUtcInTable } from './args.js';
import { toValidationIssues } from '../config/issues.js';
import { readNoticeFile, trackletOf } from './notice-file.js';
import type { CommandMain } from './io.js';
import { UsageError } from './io.js';

/**
 * `nightjar ephemeris`: the topocentric ephemeris of the object in one notice, from a
 * configured site or an ad-hoc place, at listed times or on a regular grid.
 * Both kinds of notice take the service's path (estimateObject): an `orbit` block
 * is the nominal, with an ensemble drawn from its covariance or the stated default
 * element spread; a notice with only a tracklet is answered by short-arc estimation
 * (systematic ranging into virtual orbits). Every row carries the 1-sigma ellipse
 * `unc` and `magSigma`, and the notes say where the uncertainty comes from.
 */
export const HELP = `nightjar ephemeris --notice FILE (--site ID | --lat DEG --lon DEG --height M)
                   (--times ISO[,ISO...] | --start ISO --end ISO --step MINUTES)
                   [--members N] [--seed S] [--range-prior auto|mixture|population|encounter|powerLaw] [--json] [--config FILE]

Prints where the object of a notice is, as seen from a site: astrometric ICRS
RA/Dec (light-time corrected, no aberration), rates in arcsec/s (RA rate times
cos Dec), distances from the site (delta) and the Sun (r) in au, phase angle
and solar elongation, apparent altitude/azimuth with refraction, airmass, and
V magnitude from H and G when the notice gives H. Times are ISO-8601 UTC.

The notice is checked as intake checks it, except for its age: past or
future time may be asked for. A notice with an orbit block is propagated from
its elements (ecliptic J2000, obliquity 84381.448"), with virtual orbits drawn
from the block's default element spread (weighted by the notice's positions
when it has them). A notice with only a tracklet is estimated: its positions
are fitted over a grid of distances and range-rates and resampled into virtual
orbits. Each row is the nominal with unc, the 1-sigma uncertainty ellipse
{major, minor, pa} in arcsec (pa east of north; 3 x unc holds about 99 % of
the virtual orbits), and magSigma, the spread of V in mag; the notes say where
the uncertainty comes from. --json prints {objectId, method, notes,
trackletDistanceAu, rows}: trackletDistanceAu is the distance from the
tracklet's site at its mean time, {p5, p50, p95} of the virtual orbits in au
(null without positions).
These are estimates, not an impact prediction.

Options:
  --notice FILE      notice v1 JSON file (required)
  --site ID          site id from the configuration
  --lat, --lon DEG   ad-hoc site: geodetic latitude, east longitude (degrees;
                     negative values as --lon -105.5 or --lon=-105.5)
  --height M         ad-hoc site: height above the ellipsoid, metres
  --times LIST       comma-separated ISO-8601 UTC times
  --start, --end     first and last time of a grid (ISO-8601 UTC)
  --step MINUTES     grid spacing, minutes
  --members N        virtual orbits (default 1000)
  --seed S           seed of the virtual orbits' draws (default 1; same seed, same rows)
  --range-prior P    range prior of a tracklet-only estimate: auto (default, the
                     mixture), mixture (the population model and close
                     encounters of any orbit), population (sharper for
                     main-belt objects, talks close approachers away),
                     encounter, or powerLaw (rho^0.5)
  --json             print JSON {objectId, method, notes, trackletDistanceAu, rows}
                     instead of text
  --config FILE      configuration file (default: NIGHTJAR_CONFIG, else the demo)
  -h, --help         show this help`;

/** More rows than this is almost certainly a typo in --step. */
export const MAX_ROWS = 20_000;

/** Exit code once used for a notice without an orbit block; such notices are now estimated (kept for callers that import it). */
export const EXIT_NO_ORBIT = 2;


function parseNumber(option: string, text: string): number {
  const value = Number(text);
  if (text.trim() === '' || !Number.isFinite(value)) throw new UsageError(`${option}: "${text}" is not a number`);
  return value;
}

interface Options {
  notice?: string | undefined;
  site?: string | undefined;
  lat?: string | undefined;
  lon?: string | undefined;
  height?: string | undefined;
  times?: string | undefined;
  start?: string | undefined;
  end?: string | undefined;
  step?: string | undefined;
  json?: boolean | undefined;
  members?: string | undefined;
  seed?: string | undefined;
  'range-prior'?: string | undefined;
  config?: string | undefined;
  help?: boolean | undefined;
}

function requestedTimes(values: Options): Date[] {
  const grid = values.start !== undefined || values.end !== undefined || values.step !== undefined;
  if (values.times !== undefined && grid) throw new UsageError('give either --times or --start/--end/--step, not both');
  if (values.times !== undefined) {
    const list = values.times.split(',').map((s) => s.trim()).filter((s) => s !== '');
    if (list.length === 0) throw new UsageError('--times: expected at least one ISO-8601 UTC time');
    if (list.length > MAX_ROWS) throw new UsageError(`--times: ${list.length} times is more than ${MAX_ROWS}`);
    return list.map((s) => parseUtcInTable('--times', s));
  }
  if (!grid) throw new UsageError('times are required: --times ISO[,ISO...] or --start ISO --end ISO --step MINUTES');
  if (values.start === undefined || values.end === undefined || values.step === undefined) {
    throw new UsageError('a grid needs all of --start, --end and --step');
  }
  const start = parseUtcInTable('--start', values.start);
  const end = parseUtcInTable('--end', values.end);
  const stepMin = parseNumber('--step', values.step);
  if (!(stepMin > 0)) throw new UsageError(`--step: ${values.step} minutes; expected a number of minutes > 0`);
  if (end.getTime() < start.getTime()) throw new UsageError(`--end ${values.end} is before --start ${values.start}`);
  const count = Math.floor((end.getTime() - start.getTime()) / (stepMin * 60_000) + 1e-9) + 1;
  if (count > MAX_ROWS) throw new UsageError(`the grid has ${count} times, more than ${MAX_ROWS}; use a larger --step`);
  return Array.from({ length: count }, (_, k) => new Date(start.getTime() + k * stepMin * 60_000));
}

function viewpoint(values: Options, io: Parameters<CommandMain>[1]): { location: GeodeticLocation; label: string } {
  const adHoc = values.lat !== undefined || values.lon !== undefined || values.height !== undefined;
  if (values.site !== undefined && adHoc) throw new UsageError('give either --site or --lat/--lon/--height, not both');
  if (values.site !== undefined) {
    const config = loadConfig({ path: values.config, env: io.env, cwd: io.cwd });
    const site = config.sites.find((s) => s.id === values.site);
    if (!site) throw new UsageError(`unknown site "${values.site}" (configured: ${config.sites.map((s) => s.id).join(', ')})`);
    return { location: site.location, label: `${site.id} (${site.name})` };
  }
  if (!adHoc) throw new UsageError('a site is required: --site ID, or --lat DEG --lon DEG --height M');
  if (values.lat === undefined || values.lon === undefined || values.height === undefined) {
    throw new UsageError('an ad-hoc site needs all of --lat, --lon and --height');
  }
  const raw = {
    latDeg: parseNumber('--lat', values.lat),
    lonDeg: parseNumber('--lon', values.lon),
    heightM: parseNumber('--height', values.height),
  };
  const checked = locationSchema.safeParse(raw);
  if (!checked.success) {
    const names: Record<string, string> = { latDeg: '--lat', lonDeg: '--lon', heightM: '--height' };
    const issue = toValidationIssues(checked.error)[0];
    const key = issue?.path ?? '';
    throw new UsageError(`${names[key] ?? 'the place'} ${String(raw[key as keyof typeof raw] ?? '')}: ${issue?.message ?? 'out of range'}`);
  }
  return { location: checked.data, label: `lat ${raw.latDeg} lon ${raw.lonDeg} height ${raw.heightM} m` };
}


/** Notice orbit block (ISO TT times, degrees, au) to the orbit module's perihelion elements and epoch. */
export function elementsFromNoticeOrbit(orbit: NoticeOrbit): { elements: PerihelionElements; epochTt: number } {
  return {
    elements: { qAu: orbit.q, e: orbit.e, iDeg: orbit.i, nodeDeg: orbit.node, periDeg: orbit.peri, tpTt: ttFromTtIso('orbit.tp', orbit.tp) },
    epochTt: ttFromTtIso('orbit.epoch', orbit.epoch),
  };
}

const round = (x: number, digits: number): number => Number(x.toFixed(digits));
const roundSignificant = (x: number, digits: number): number => Number(x.toPrecision(digits));

/** Rows rounded to what the methods support (0.4 mas in RA/Dec, 1e-5 arcsec/s, 10 significant digits in distance). */
export function roundRow(row: EphemerisRow): EphemerisRow {
  return {
    t: row.t,
    ra: round(row.ra, 7),
    dec: round(row.dec, 7),
    raRate: round(row.raRate, 5),
    decRate: round(row.decRate, 5),
    unc: row.unc === null ? null : { major: roundSignificant(row.unc.major, 4), minor: roundSignificant(row.unc.minor, 4), pa: round(row.unc.pa, 1) },
    mag: row.mag === null ? null : round(row.mag, 2),
    magSigma: row.magSigma === null ? null : round(row.magSigma, 2),
    delta: roundSignificant(row.delta, 10),
    r: roundSignificant(row.r, 10),
    phase: round(row.phase, 4),
    elong: round(row.elong, 4),
    alt: round(row.alt, 4),
    az: round(row.az, 4),
    airmass: row.airmass === null ? null : round(row.airmass, 4),
  };
}

function rangePriorOption(value: string | undefined): RangePriorChoice {
  if (value === undefined) return 'auto';
  const choice = RANGE_PRIOR_CHOICES.find((p) => p === value);
  if (!choice) throw new UsageError(`--range-prior: ${value}; expected one of ${RANGE_PRIOR_CHOICES.join(', ')}`);
  return choice;
}

function ensembleOptions(values: Options): { members: number; seed: number } {
  const members = values.members === undefined ? DEFAULT_MEMBERS : parseNumber('--members', values.members);
  if (!Number.isInteger(members) || members < 10 || members > 100_000) throw new UsageError(`--members: ${values.members}; expected a whole number from 10 to 100000`);
  const seed = values.seed === undefined ? 1 : parseNumber('--seed', values.seed);
  if (!Number.isInteger(seed)) throw new UsageError(`--seed: ${values.seed}; expected a whole number`);
  return { members, seed };
}


function formatRa(deg: number): string {
  const rounded = Math.round((deg / 15) * 3600 * 100) / 100; // round first so 59.999 s never prints as 60.00
  const totalS = rounded >= 86_400 ? rounded - 86_400 : rounded;
  const h = Math.floor(totalS / 3600);
  const m = Math.floor((totalS - h * 3600) / 60);
  const s = totalS - h * 3600 - m * 60;
  return `${String(h).padStart(2, '0')} ${String(m).padStart(2, '0')} ${s.toFixed(2).padStart(5, '0')}`;
}

function formatDec(deg: number): string {
  const sign = deg < 0 ? '-' : '+';
  const totalS = Math.round(Math.abs(deg) * 3600 * 10) / 10;
  const d = Math.floor(totalS / 3600);
  const m = Math.floor((totalS - d * 3600) / 60);
  const s = totalS - d * 3600 - m * 60;
  return `${sign}${String(d).padStart(2, '0')} ${String(m).padStart(2, '0')} ${s.toFixed(1).padStart(4, '0')}`;
}

function formatArcsec(x: number): string {
  return x >= 100 ? `${x.toFixed(0)}"` : `${x.toFixed(1)}"`;
}

/** What `--json` prints: the rows with the estimate's method and notes (which uncertainty the ellipses come from). */
export interface EphemerisAnswer {
  objectId: string;
  method: 'orbit-block' | 'ranging';
  notes: string[];
  /** Distance from the tracklet's site at the tracklet's mean time, au: 5, 50 and 95 % of the virtual orbits; null for a notice without positions. */
  trackletDistanceAu: Percentiles | null;
  rows: EphemerisRow[];
}

/** A distance in au with three significant figures (0.00612, 0.0891, 2.14). */
function formatAu(au: number): string {
  return au.toPrecision(3);
}

function formatText(answer: EphemerisAnswer, notice: Notice, label: string): string {
  const { rows } = answer;
  const estimated = rows.some((r) => r.unc !== null);
  const lines = [
    `ephemeris of ${notice.objectId} (notice ${notice.noticeId}) from ${label}`,
    answer.method === 'orbit-block'
      ? 'from the orbit block (the nominal); unc is the 1-sigma ellipse of its ensemble, not an impact prediction'
      : `estimated from the tracklet${notice.orbit === undefined ? ' alone' : ' (the notes say what became of the orbit block)'} (virtual orbits); unc is the 1-sigma ellipse, not an impact prediction`,
    ...answer.notes.map((note) => `note: ${note}`),
    ...(answer.trackletDistanceAu === null
      ? []
      : [`distance from the tracklet's site at its mean time: ${[answer.trackletDistanceAu.p5, answer.trackletDistanceAu.p50, answer.trackletDistanceAu.p95].map(formatAu).join(' / ')} au (5 / 50 / 95 % of the virtual orbits)`]),
    'astrometric ICRS, light-time corrected; rates in arcsec/s (RA rate x cos Dec); distances in au; angles in deg',
    '',
    'time (UTC)            RA (h m s)    Dec (d m s)     raRate   decRate      delta         r   phase   elong     alt      az  airmass     V' +
      (estimated ? '    unc 1-sigma (maj x min @ pa)  Vsig' : ''),
  ];
  for (const row of rows) {
    lines.push(
      [
        row.t.replace(/\.\d{3}Z$/, 'Z').padEnd(20),
        formatRa(row.ra).padStart(12),
        formatDec(row.dec).padStart(13),
        row.raRate.toFixed(4).padStart(10),
        row.decRate.toFixed(4).padStart(9),
        row.delta.toFixed(6).padStart(10),
        row.r.toFixed(6).padStart(9),
        row.phase.toFixed(1).padStart(7),
        row.elong.toFixed(1).padStart(7),
        row.alt.toFixed(1).padStart(7),
        row.az.toFixed(1).padStart(7),
        (row.airmass === null ? '-' : row.airmass.toFixed(2)).padStart(8),
        (row.mag === null ? '-' : row.mag.toFixed(1)).padStart(5),
        ...(row.unc === null ? [] : [`${formatArcsec(row.unc.major)} x ${formatArcsec(row.unc.minor)} @ ${row.unc.pa.toFixed(0)}`.padStart(22), (row.magSigma === null ? '-' : row.magSigma.toFixed(2)).padStart(6)]),
      ].join(' '),
    );
  }
  return `${lines.join('\n')}\n`;
}

export const main: CommandMain = async (argv, io) => {
  const parsed = parseCommandArgs(argv, {
        notice: { type: 'string' },
        site: { type: 'string' },
        lat: { type: 'string' },
        lon: { type: 'string' },
        height: { type: 'string' },
        times: { type: 'string' },
        start: { type: 'string' },
        end: { type: 'string' },
        step: { type: 'string' },
        json: { type: 'boolean' },
        members: { type: 'string' },
        seed: { type: 'string' },
        'range-prior': { type: 'string' },
        config: { type: 'string' }
      }, HELP, io);
  if (parsed === null) return 0;
  const values: Options = parsed;
  if (values.notice === undefined) throw new UsageError('--notice FILE is required');
  const times = requestedTimes(values);
  const { location, label } = viewpoint(values, io);
  const read = readNoticeFile(values.notice, io.cwd);
  if (!read.ok) {
    io.stderr(`nightjar ephemeris: ${read.message}\n`);
    return 1;
  }
  const notice = read.notice;
  if (notice.retracted === true) {
    io.stderr(
      `nightjar ephemeris: ${values.notice} retracts ${notice.objectId} (${notice.reason ?? 'no reason given'}) and carries no positions or orbit; ` +
        'give --notice a file with observations or an orbit block\n',
    );
    return 1;
  }
  const { members, seed } = ensembleOptions(values);
  // One path for both kinds of notice, as the service takes: a tracklet is estimated by ranging; an
  // orbit block is the nominal, with an ensemble from its covariance or the stated default spread.
  const tracklet = trackletOf(notice);
  const estimate = estimateObject({
    objectId: notice.objectId,
    observations: tracklet,
    orbit: notice.orbit,
    now: new Date(notice.issuedAt),
    members,
    seed,
    ranging: rangingFor(rangePriorOption(values['range-prior'])),
  });
  const rows = estimate.ephemeris(location, times).map((row) => roundRow(row));
  const trackletDistanceAu = tracklet.length > 0 ? estimate.summary.rangeAu : null;
  const answer: EphemerisAnswer = { objectId: notice.objectId, method: estimate.summary.method, notes: estimate.summary.notes, trackletDistanceAu, rows };
  io.stdout(values.json ? `${JSON.stringify(answer, null, 2)}\n` : formatText(answer, notice, label));
  return 0;
};
