import * as Astronomy from 'astronomy-engine';
import type { Site } from '../config/schema.js';
import { SkyInputError, requireFinite } from './errors.js';
import { moonAndSunInFrame } from './bodies.js';
import { observerFromLocation, siteFrameAt } from './site.js';

/**
 * The night at a site: sunset, dusk at the site's night Sun altitude, dawn, sunrise,
 * the dark interval, and the Moon (rise, set, phase, the moon-up part of the dark).
 *
 * Which night a local date means: the site has no time zone in its configuration, so the
 * local date is taken in local mean solar time (UTC + east longitude / 15 h). The night of
 * date D is the one that begins on the evening of D: events are searched from local mean
 * noon of D to local mean noon of D + 1. Sunset and sunrise are the upper limb on the
 * refracted horizon (astronomy-engine SearchRiseSet); dusk and dawn are the geometric
 * (unrefracted) altitude of the Sun's centre crossing nightSunAltitudeDeg, as twilight is
 * conventionally defined (astronomy-engine SearchAltitude).
 */

const MS_PER_HOUR = 3_600_000;
const MS_PER_DAY = 86_400_000;

export const NIGHT_RULE =
  'the night of a local date starts on that date\'s evening: events are searched from local mean noon ' +
  '(UTC + east longitude / 15 h) of the date to local mean noon of the next day';

export interface TimeInterval {
  start: Date;
  end: Date;
}

export interface MoonNight {
  /** Moonrise times (upper limb on the refracted horizon) between the two local noons. */
  rises: Date[];
  sets: Date[];
  /** Moon phase at the middle of the dark interval (or local midnight without one). */
  evaluatedAt: Date;
  illuminatedFraction: number;
  /** Sun-Moon-site angle, degrees: 0 full, 180 new. */
  phaseAngleDeg: number;
  /** Ecliptic longitude of the Moon minus that of the Sun, degrees 0..360 (0 new, 180 full). */
  elongationPhaseDeg: number;
  /** The parts of the dark interval with the Moon above the horizon. */
  upDuringDark: TimeInterval[];
  upDuringDarkH: number;
  /** Dark hours with the Moon below the horizon. */
  moonFreeDarkH: number;
}

export interface Night {
  siteId: string;
  localDate: string;
  nightSunAltitudeDeg: number;
  /** Search span: local mean noon of the date to local mean noon of the next day. */
  span: TimeInterval;
  sunset: Date | null;
  /** Sun's centre descends through nightSunAltitudeDeg. */
  dusk: Date | null;
  /** Sun's centre ascends through nightSunAltitudeDeg. */
  dawn: Date | null;
  sunrise: Date | null;
  /** Sun below nightSunAltitudeDeg; null when it never gets that low. */
  dark: TimeInterval | null;
  darkH: number;
  moon: MoonNight;
  /** Plain-language notes for unusual nights (midnight Sun, polar night). */
  notes: string[];
}

const LOCAL_DATE = /^(\d{4})-(\d{2})-(\d{2})$/;

/** Local mean noon (UTC instant) of a YYYY-MM-DD date at east longitude lonDeg. */
export function localMeanNoonUtc(localDate: string, lonDeg: number): Date {
  const m = LOCAL_DATE.exec(localDate);
  if (!m) throw new SkyInputError('localDate', localDate, 'expected a date as YYYY-MM-DD');
  const [y, mo, d] = [Number(m[1]), Number(m[2]), Number(m[3])];
  const midnightUtc = Date.UTC(y, mo - 1, d);
  const check = new Date(midnightUtc);
  if (check.getUTCFullYear() !== y || check.getUTCMonth() !== mo - 1 || check.getUTCDate() !== d) {
    throw new SkyInputError('localDate', localDate, 'no such calendar date');
  }
  requireFinite('location.lonDeg', lonDeg, -180, 360);
  const lon = lonDeg > 180 ? lonDeg - 360 : lonDeg;
  return new Date(midnightUtc + 12 * MS_PER_HOUR - (lon / 15) * MS_PER_HOUR);
}

function toDate(t: Astronomy.AstroTime | null): Date | null {
  return t === null ? null : t.date;
}

function within(t: Date | null, span: TimeInterval): Date | null {
  return t !== null && t >= span.start && t <= span.end ? t : null;
}

/** All rise (+1) or set (-1) events of a body in the span, in time order (astronomy-engine SearchRiseSet). */
function riseSetEvents(body: Astronomy.Body, observer: Astronomy.Observer, direction: 1 | -1, span: TimeInterval): Date[] {
  const out: Date[] = [];
  let from = span.start;
  for (let i = 0; i < 4; i++) {
    const limitDays = (span.end.getTime() - from.getTime()) / MS_PER_DAY;
    if (limitDays <= 0) break;
    const t = toDate(Astronomy.SearchRiseSet(body, observer, direction, from, limitDays));
    if (t === null || t > span.end) break;
    out.push(t);
    from = new Date(t.getTime() + 60_000);
  }
  return out;
}

/** Intervals inside `dark` with the Moon up, from the rise/set events and the Moon's state at the start. */
function moonUpIntervals(dark: TimeInterval, upAtStart: boolean, rises: Date[], sets: Date[]): TimeInterval[] {
  const events = [
    ...rises.map((t) => ({ t, up: true })),
    ...sets.map((t) => ({ t, up: false })),
  ]
    .filter((e) => e.t > dark.start && e.t < dark.end)
    .sort((a, b) => a.t.getTime() - b.t.getTime());
  const out: TimeInterval[] = [];
  let up = upAtStart;
  let since = dark.start;
  for (const e of events) {
    if (e.up === up) continue;
    if (up) out.push({ start: since, end: e.t });
    up = e.up;
    since = e.t;
  }
  if (up) out.push({ start: since, end: dark.end });
  return out;
}

function hoursOf(intervals: TimeInterval[]): number {
  return intervals.reduce((h, i) => h + (i.end.getTime() - i.start.getTime()) / MS_PER_HOUR, 0);
}

/**
 * The night of `localDate` (YYYY-MM-DD, see NIGHT_RULE) at the site. Event times come from
 * astronomy-engine's searches (0.1 s tolerance); the Moon's phase from its topocentric place.
 */
export function nightAt(site: Site, localDate: string): Night {
  const observer = observerFromLocation(site.location);
  const nightSunAltitudeDeg = requireFinite('limits.nightSunAltitudeDeg', site.limits.nightSunAltitudeDeg, -30, 0);
  const start = localMeanNoonUtc(localDate, site.location.lonDeg);
  const span: TimeInterval = { start, end: new Date(start.getTime() + MS_PER_DAY) };
  const notes: string[] = [];

  const sunset = within(toDate(Astronomy.SearchRiseSet(Astronomy.Body.Sun, observer, -1, span.start, 1)), span);
  const dusk = within(toDate(Astronomy.SearchAltitude(Astronomy.Body.Sun, observer, -1, span.start, 1, nightSunAltitudeDeg)), span);
  const dawnFrom = dusk ?? span.start;
  const dawn = within(toDate(Astronomy.SearchAltitude(Astronomy.Body.Sun, observer, +1, dawnFrom, 1, nightSunAltitudeDeg)), span);
  const sunrise = within(toDate(Astronomy.SearchRiseSet(Astronomy.Body.Sun, observer, +1, sunset ?? span.start, 1)), span);

  const sunAltAt = (t: Date) => moonAndSunInFrame(siteFrameAt(site.location, t)).sun.geometricAltDeg;
  let dark: TimeInterval | null = null;
  if (dusk !== null && dawn !== null) {
    dark = { start: dusk, end: dawn };
  } else if (dusk !== null) {
    dark = { start: dusk, end: span.end };
    notes.push(`the Sun stays below ${nightSunAltitudeDeg} deg until after the next local noon`);
  } else if (dawn !== null) {
    dark = { start: span.start, end: dawn };
    notes.push(`the Sun was already below ${nightSunAltitudeDeg} deg at local noon`);
  } else {
    const midnight = new Date(span.start.getTime() + MS_PER_DAY / 2);
    const alt = sunAltAt(midnight);
    if (alt <= nightSunAltitudeDeg) {
      dark = { ...span };
      notes.push(`polar night: the Sun stays below ${nightSunAltitudeDeg} deg all day`);
    } else {
      notes.push(`no dark time: the Sun does not go below ${nightSunAltitudeDeg} deg (at local midnight it is at ${alt.toFixed(1)} deg)`);
    }
  }
  if (sunset === null) notes.push('the Sun does not set in this span');
  if (sunrise === null) notes.push('the Sun does not rise in this span');

  const moonRises = riseSetEvents(Astronomy.Body.Moon, observer, +1, span);
  const moonSets = riseSetEvents(Astronomy.Body.Moon, observer, -1, span);
  const evaluatedAt =
    dark !== null
      ? new Date((dark.start.getTime() + dark.end.getTime()) / 2)
      : new Date(span.start.getTime() + MS_PER_DAY / 2);
  const { moon } = moonAndSunInFrame(siteFrameAt(site.location, evaluatedAt));
  let upDuringDark: TimeInterval[] = [];
  if (dark !== null) {
    // Up at the start of the dark if the next set comes before the next rise (consistent with the events).
    const nextSet = toDate(Astronomy.SearchRiseSet(Astronomy.Body.Moon, observer, -1, dark.start, 2));
    const nextRise = toDate(Astronomy.SearchRiseSet(Astronomy.Body.Moon, observer, +1, dark.start, 2));
    const upAtStart = nextSet !== null && (nextRise === null || nextSet < nextRise);
    upDuringDark = moonUpIntervals(dark, upAtStart, moonRises, moonSets);
  }
  const darkH = dark === null ? 0 : hoursOf([dark]);
  const upDuringDarkH = hoursOf(upDuringDark);
  return {
    siteId: site.id,
    localDate,
    nightSunAltitudeDeg,
    span,
    sunset,
    dusk,
    dawn,
    sunrise,
    dark,
    darkH,
    moon: {
      rises: moonRises,
      sets: moonSets,
      evaluatedAt,
      illuminatedFraction: moon.illuminatedFraction,
      phaseAngleDeg: moon.phaseAngleDeg,
      elongationPhaseDeg: Astronomy.MoonPhase(evaluatedAt),
      upDuringDark,
      upDuringDarkH,
      moonFreeDarkH: darkH - upDuringDarkH,
    },
    notes,
  };
}

/** The night as JSON-ready data: ISO-8601 UTC strings, hours rounded to 0.001 h, angles to 0.01 deg. */
export function nightToJson(night: Night): Record<string, unknown> {
  const iso = (t: Date | null) => (t === null ? null : t.toISOString());
  const interval = (i: TimeInterval) => ({ startUtc: iso(i.start), endUtc: iso(i.end) });
  const r3 = (x: number) => Math.round(x * 1000) / 1000;
  const r2 = (x: number) => Math.round(x * 100) / 100;
  return {
    siteId: night.siteId,
    localDate: night.localDate,
    rule: NIGHT_RULE,
    nightSunAltitudeDeg: night.nightSunAltitudeDeg,
    span: interval(night.span),
    sunsetUtc: iso(night.sunset),
    duskUtc: iso(night.dusk),
    dawnUtc: iso(night.dawn),
    sunriseUtc: iso(night.sunrise),
    dark: night.dark === null ? null : { ...interval(night.dark), hours: r3(night.darkH) },
    moon: {
      risesUtc: night.moon.rises.map(iso),
      setsUtc: night.moon.sets.map(iso),
      evaluatedAtUtc: iso(night.moon.evaluatedAt),
      illuminatedFraction: r3(night.moon.illuminatedFraction),
      phaseAngleDeg: r2(night.moon.phaseAngleDeg),
      elongationPhaseDeg: r2(night.moon.elongationPhaseDeg),
      upDuringDark: night.moon.upDuringDark.map(interval),
      upDuringDarkHours: r3(night.moon.upDuringDarkH),
      moonFreeDarkHours: r3(night.moon.moonFreeDarkH),
    },
    notes: night.notes,
  };
}

/**
 * The local date (YYYY-MM-DD) of the night an instant belongs to, by NIGHT_RULE: the calendar
 * date, in local mean solar time (UTC + east longitude / 15 h), of the instant 12 hours earlier,
 * so everything from one local mean noon to the next is one night. Longitude in degrees, east
 * positive (-180 to 360).
 */
export function localNightOf(t: Date, lonDeg: number): string {
  if (!Number.isFinite(t.getTime())) throw new SkyInputError('t', t.getTime(), 'expected a valid time');
  requireFinite('location.lonDeg', lonDeg, -180, 360);
  const lon = lonDeg > 180 ? lonDeg - 360 : lonDeg;
  return new Date(t.getTime() + (lon / 15) * MS_PER_HOUR - 12 * MS_PER_HOUR).toISOString().slice(0, 10);
}
