/**
 * The leap-second table: TAI - UTC in whole seconds from each date on (0h UTC).
 *
 * Source: IERS Bulletin C (Earth Orientation Center of the IERS, Paris
 * Observatory), as carried by the public-domain NTP-format list of leap seconds
 * ("leap-seconds.list", distributed with the IANA time-zone data). Copied from
 * the list last updated 2026-07-06 (NTP timestamp 3992312697), which states
 * that it expires on 2027-06-28: no leap second at the end of December 2026;
 * the next possible one is at the end of June 2027, announced in January 2027.
 *
 * To update: take the newest list (Debian package tzdata,
 * /usr/share/zoneinfo/leap-seconds.list, or the IERS), add any new row below,
 * set LEAP_SECONDS_UPDATED and LEAP_SECONDS_VALID_UNTIL_UTC from its "#$"
 * and "#@" lines (seconds since 1900-01-01), and run `npx vitest run test/sky`.
 * Past LEAP_SECONDS_VALID_UNTIL_UTC the orbit module refuses UTC instants
 * (src/sky/time-scale.ts).
 */

/** One row: from `fromUtc` (0h UTC of that date) on, TAI - UTC = `taiMinusUtcS` seconds. */
export interface LeapSecondRow {
  readonly fromUtc: string;
  readonly taiMinusUtcS: number;
}

export const LEAP_SECONDS_SOURCE = 'IERS Bulletin C, via the NTP-format leap-seconds.list';
/** When the source list was last updated (its "#$" line). */
export const LEAP_SECONDS_UPDATED = '2026-07-06';
/** The list's expiry (its "#@" line): UTC instants from here on are past the table's validity horizon. */
export const LEAP_SECONDS_VALID_UNTIL_UTC = '2027-06-28T00:00:00Z';

/** TAI - UTC since 1972-01-01, when UTC took its present definition (the first row is not a leap second). */
export const LEAP_SECOND_TABLE: readonly LeapSecondRow[] = Object.freeze([
  { fromUtc: '1972-01-01', taiMinusUtcS: 10 },
  { fromUtc: '1972-07-01', taiMinusUtcS: 11 },
  { fromUtc: '1973-01-01', taiMinusUtcS: 12 },
  { fromUtc: '1974-01-01', taiMinusUtcS: 13 },
  { fromUtc: '1975-01-01', taiMinusUtcS: 14 },
  { fromUtc: '1976-01-01', taiMinusUtcS: 15 },
  { fromUtc: '1977-01-01', taiMinusUtcS: 16 },
  { fromUtc: '1978-01-01', taiMinusUtcS: 17 },
  { fromUtc: '1979-01-01', taiMinusUtcS: 18 },
  { fromUtc: '1980-01-01', taiMinusUtcS: 19 },
  { fromUtc: '1981-07-01', taiMinusUtcS: 20 },
  { fromUtc: '1982-07-01', taiMinusUtcS: 21 },
  { fromUtc: '1983-07-01', taiMinusUtcS: 22 },
  { fromUtc: '1985-07-01', taiMinusUtcS: 23 },
  { fromUtc: '1988-01-01', taiMinusUtcS: 24 },
  { fromUtc: '1990-01-01', taiMinusUtcS: 25 },
  { fromUtc: '1991-01-01', taiMinusUtcS: 26 },
  { fromUtc: '1992-07-01', taiMinusUtcS: 27 },
  { fromUtc: '1993-07-01', taiMinusUtcS: 28 },
  { fromUtc: '1994-07-01', taiMinusUtcS: 29 },
  { fromUtc: '1996-01-01', taiMinusUtcS: 30 },
  { fromUtc: '1997-07-01', taiMinusUtcS: 31 },
  { fromUtc: '1999-01-01', taiMinusUtcS: 32 },
  { fromUtc: '2006-01-01', taiMinusUtcS: 33 },
  { fromUtc: '2009-01-01', taiMinusUtcS: 34 },
  { fromUtc: '2012-07-01', taiMinusUtcS: 35 },
  { fromUtc: '2015-07-01', taiMinusUtcS: 36 },
  { fromUtc: '2017-01-01', taiMinusUtcS: 37 },
]);
