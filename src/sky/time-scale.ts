import { AstroTime, DeltaT_EspenakMeeus, SetDeltaTFunction } from 'astronomy-engine';
import { SkyInputError, requireDate, requireFinite } from './errors.js';
import { LEAP_SECOND_TABLE, LEAP_SECONDS_SOURCE, LEAP_SECONDS_UPDATED, LEAP_SECONDS_VALID_UNTIL_UTC } from './leap-seconds.js';

/**
 * The project's time scales, in one place.
 *
 * - TT = UTC + (TAI - UTC) + 32.184 s, TAI - UTC from the leap-second table
 *   (src/sky/leap-seconds.ts, IERS Bulletin C). TT - TAI = 32.184 s exactly
 *   (IAU 1991 Resolution A4; Explanatory Supplement 1992, sect. 2.2).
 * - UT1 is taken as UTC for the Earth's rotation (sidereal time, the site's
 *   position in space). The IERS keeps |UT1 - UTC| below 0.9 s, which this
 *   ignores: at most 13.5" of Earth rotation, 0.4 km of a site's motion.
 *
 * astronomy-engine derives TT from UT with a Delta T function that is global
 * to the library (its SetDeltaTFunction): loading this module installs
 * `deltaTSeconds`, so every AstroTime made in this thread (the main thread or
 * a worker) counts TT from the table. Every module of ours that uses the
 * library's time imports this one, directly or through a module that does
 * (test/sky/time-scale.test.ts checks the import graph).
 *
 * Strict and lenient: `ttMinusUtcS` (and the orbit module's UTC -> TT) refuse
 * instants before 1972 and at or after the table's validity horizon. The
 * library's function is lenient so the sky functions keep working: before
 * 1972 it returns the library's own Delta T model (Espenak & Meeus, TT - UT1),
 * and past the horizon it assumes no further leap second (an error of at most
 * one second per leap second missed, negligible for twilight, the Moon and
 * the limits).
 */

/** TT - TAI, seconds (exact by definition). */
export const TT_MINUS_TAI_S = 32.184;

const J2000_MS = Date.UTC(2000, 0, 1, 12, 0, 0);
const MS_PER_DAY = 86_400_000;
const SECONDS_PER_DAY = 86_400;

/** Row starts as UT days since J2000 (2000-01-01T12:00 UTC) and TT - UTC of each row, seconds. */
const STARTS_UT_DAYS = Float64Array.from(LEAP_SECOND_TABLE, (row) => (Date.parse(`${row.fromUtc}T00:00:00Z`) - J2000_MS) / MS_PER_DAY);
const TT_MINUS_UTC_S = Float64Array.from(LEAP_SECOND_TABLE, (row) => TT_MINUS_TAI_S + row.taiMinusUtcS);
const ROWS = STARTS_UT_DAYS.length;
const FIRST_START_MS = J2000_MS + STARTS_UT_DAYS[0]! * MS_PER_DAY;
const VALID_UNTIL_MS = Date.parse(LEAP_SECONDS_VALID_UNTIL_UTC);

/** The row in force at `utDays` (the last whose start is not after it); -1 before the table. */
function rowAt(utDays: number): number {
  for (let i = ROWS - 1; i >= 0; i--) if (utDays >= STARTS_UT_DAYS[i]!) return i;
  return -1;
}

/** The table's extent and provenance, for messages and checks. */
export const LEAP_SECOND_TABLE_INFO = Object.freeze({
  source: LEAP_SECONDS_SOURCE,
  updated: LEAP_SECONDS_UPDATED,
  firstUtc: new Date(FIRST_START_MS).toISOString(),
  validUntilUtc: new Date(VALID_UNTIL_MS).toISOString(),
});

/**
 * TT - UTC at a UTC instant, seconds: 32.184 + (TAI - UTC) from the leap-second
 * table. Throws SkyInputError (naming `field`) before 1972-01-01 and at or after
 * the table's validity horizon, saying how to update the table.
 */
export function ttMinusUtcS(timeUtc: Date, field = 'timeUtc'): number {
  requireDate(field, timeUtc);
  const ms = timeUtc.getTime();
  if (ms < FIRST_START_MS) {
    throw new SkyInputError(field, timeUtc, `before ${LEAP_SECOND_TABLE_INFO.firstUtc}, where the leap-second table (UTC as now defined) begins`);
  }
  if (ms >= VALID_UNTIL_MS) {
    throw new SkyInputError(
      field,
      timeUtc,
      `at or past ${LEAP_SECOND_TABLE_INFO.validUntilUtc}, the validity horizon of the leap-second table (${LEAP_SECONDS_SOURCE}, updated ${LEAP_SECONDS_UPDATED}); ` +
        'TT cannot be known there: update src/sky/leap-seconds.ts from the newest IERS Bulletin C and rebuild',
    );
  }
  return TT_MINUS_UTC_S[rowAt((ms - J2000_MS) / MS_PER_DAY)]!;
}

/**
 * TT - UT (seconds) for astronomy-engine at UT days since J2000 (UT1 = UTC):
 * the table's TT - UTC from 1972 on (the last row past the horizon), the
 * library's Espenak & Meeus model before. Installed as the library's Delta T.
 */
export function deltaTSeconds(utDays: number): number {
  const i = rowAt(utDays);
  return i < 0 ? DeltaT_EspenakMeeus(utDays) : TT_MINUS_UTC_S[i]!;
}

/**
 * UT (= UTC) days since J2000 of a TT day number (days since J2000.0 TT), the
 * exact inverse of UT -> TT by the table. A TT inside an inserted leap second
 * (which UTC day counts cannot name) maps to the instant the leap second ends.
 * Before 1972, the library's model inverted by fixed-point iteration.
 */
export function utDaysFromTt(tt: number): number {
  requireFinite('tt', tt);
  for (let i = ROWS - 1; i >= 0; i--) {
    const ut = tt - TT_MINUS_UTC_S[i]! / SECONDS_PER_DAY;
    if (ut >= STARTS_UT_DAYS[i]!) return ut;
    // Not in row i; if row i - 1 would put it at or after row i's start, it is inside the leap second.
    if (i > 0 && tt - TT_MINUS_UTC_S[i - 1]! / SECONDS_PER_DAY >= STARTS_UT_DAYS[i]!) return STARTS_UT_DAYS[i]!;
  }
  let ut = tt - DeltaT_EspenakMeeus(tt) / SECONDS_PER_DAY;
  for (let k = 0; k < 4; k++) ut = tt - DeltaT_EspenakMeeus(ut) / SECONDS_PER_DAY; // Delta T changes < 2 s/yr: contracts by 1e-7
  return ut;
}

/**
 * astronomy-engine time for a TT day number, without the library's own
 * inversion (AstroTime.FromTerrestrialTime), which never ends for a TT inside
 * a leap second. Its .tt equals `tt` except inside a leap second (< 1 s).
 */
export function astroTimeFromTt(tt: number): AstroTime {
  return new AstroTime(utDaysFromTt(tt));
}

/** True when astronomy-engine in this thread counts TT from the table (a check for tests and start-up). */
export function timeScaleInstalled(): boolean {
  const ut = STARTS_UT_DAYS[ROWS - 1]! + 1;
  return Math.abs((new AstroTime(ut).tt - ut) * SECONDS_PER_DAY - TT_MINUS_UTC_S[ROWS - 1]!) < 1e-6;
}

SetDeltaTFunction(deltaTSeconds);
