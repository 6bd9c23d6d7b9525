import { ttMinusUtcS, utDaysFromTt } from '../sky/time-scale.js';
import { OrbitInputError, requireFinite } from './errors.js';

/**
 * Time scales for the dynamics. TT is counted as days since J2000.0
 * (2000-01-01T12:00:00 TT), the convention of astronomy-engine's AstroTime.tt;
 * UTC -> TT through the leap-second table (IERS Bulletin C) of
 * src/sky/time-scale.ts, which also installs the same conversion into
 * astronomy-engine.
 */

const J2000_CLOCK_MS = Date.UTC(2000, 0, 1, 12, 0, 0);
const MS_PER_DAY = 86_400_000;
const ISO_PATTERN = /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}(:\d{2}(\.\d+)?)?(Z)?$/;

/**
 * TT days since J2000.0 for a UTC instant: UTC + 32.184 s + (TAI - UTC) from the
 * leap-second table. Throws SkyInputError for instants before 1972 or past the
 * table's validity horizon (the message says how to update it).
 */
export function ttFromUtc(date: Date): number {
  const ms = date instanceof Date ? date.getTime() : Number.NaN;
  if (!Number.isFinite(ms)) throw new OrbitInputError('time', date, 'expected a valid Date');
  return (ms - J2000_CLOCK_MS) / MS_PER_DAY + ttMinusUtcS(date, 'time') / 86_400;
}

/**
 * The UTC instant (millisecond Date) of a TT day number (days since J2000.0 TT),
 * the inverse of ttFromUtc; past the table's horizon it assumes no further leap
 * second (a TT there has no other answer yet), inside a leap second it gives the
 * instant the leap second ends.
 */
export function utcFromTt(tt: number): Date {
  requireFinite('tt', tt);
  return new Date(J2000_CLOCK_MS + utDaysFromTt(tt) * MS_PER_DAY);
}

/**
 * Parses an ISO-8601 date-time read on the TT clock (as orbit epochs and
 * perihelion times are given), e.g. "1990-10-28T13:05:04.7". A trailing Z is
 * accepted and means nothing more than the absence of a zone offset.
 * Returns TT days since J2000.0.
 */
export function ttFromTtIso(field: string, iso: string): number {
  if (typeof iso !== 'string' || !ISO_PATTERN.test(iso)) {
    throw new OrbitInputError(field, iso, 'expected an ISO-8601 date-time on the TT clock, e.g. 2027-03-04T05:06:07');
  }
  const ms = Date.parse(iso.endsWith('Z') ? iso : `${iso}Z`);
  if (!Number.isFinite(ms)) throw new OrbitInputError(field, iso, 'not a valid calendar date-time');
  return (ms - J2000_CLOCK_MS) / MS_PER_DAY;
}

/** Formats a TT day number as an ISO-8601 string on the TT clock (no zone suffix). */
export function ttIsoFromTt(tt: number): string {
  requireFinite('tt', tt);
  return new Date(J2000_CLOCK_MS + tt * MS_PER_DAY).toISOString().replace('Z', '');
}
