import { AstroTime } from 'astronomy-engine';

/**
 * Time scales of the reference generator, kept apart from the project's own:
 * UT1 is taken equal to UTC (|UT1 - UTC| < 0.9 s by the IERS's rule) and
 * TT - UTC = 32.184 s + the leap seconds in force, 37 s from 2017-01-01
 * (IERS Bulletin C). No leap second had been announced past that when this was
 * written (from memory of the Bulletins), so dates after REFERENCE_TIME_VALID_UNTIL
 * are refused rather than guessed. Counts in days since J2000.0 (2000-01-01T12:00),
 * astronomy-engine's convention for AstroTime.ut and .tt.
 */
export const TT_MINUS_TAI_S = 32.184;
const LEAP_SECONDS_FROM_2017 = 37;
const VALID_FROM_MS = Date.UTC(2017, 0, 1);
/** Last instant this reference's leap-second count is trusted for. */
export const REFERENCE_TIME_VALID_UNTIL = new Date(Date.UTC(2029, 0, 1));
const J2000_MS = Date.UTC(2000, 0, 1, 12);
export const MS_PER_DAY = 86_400_000;

/** TT - UTC in seconds for a UTC instant (ms since 1970). */
export function ttMinusUtcSeconds(utcMs: number): number {
  if (!(utcMs >= VALID_FROM_MS && utcMs < REFERENCE_TIME_VALID_UNTIL.getTime())) {
    throw new RangeError(`reference time ${new Date(utcMs).toISOString()}: outside 2017-01-01 .. ${REFERENCE_TIME_VALID_UNTIL.toISOString()}, where the leap-second count (37 s) is known`);
  }
  return TT_MINUS_TAI_S + LEAP_SECONDS_FROM_2017;
}

/** TT days since J2000.0 of a UTC instant (ms since 1970). */
export function ttDaysOfUtc(utcMs: number): number {
  return (utcMs - J2000_MS) / MS_PER_DAY + ttMinusUtcSeconds(utcMs) / 86_400;
}

/** The UTC instant (ms) of a TT day count. */
export function utcMsOfTt(ttDays: number): number {
  const guess = J2000_MS + ttDays * MS_PER_DAY;
  return guess - ttMinusUtcSeconds(guess) * 1000;
}

/**
 * An astronomy-engine time with ut = UTC and tt from the leap-second count
 * above, set explicitly so that the library's own Delta T model (or anything
 * installed in it) plays no part.
 */
export function referenceAstroTime(utcMs: number): AstroTime {
  const time = new AstroTime(new Date(utcMs));
  time.ut = (utcMs - J2000_MS) / MS_PER_DAY;
  time.tt = ttDaysOfUtc(utcMs);
  return time;
}

/** An astronomy-engine time for a TT day count (ut from the same rule). */
export function referenceAstroTimeOfTt(ttDays: number): AstroTime {
  return referenceAstroTime(utcMsOfTt(ttDays));
}
