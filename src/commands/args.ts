import { parseArgs, type ParseArgsConfig } from 'node:util';
import { EstimationInputError } from '../orbit/estimation/errors.js';
import { OrbitInputError } from '../orbit/errors.js';
import { PhotometryInputError } from '../photometry/errors.js';
import { SkyInputError } from '../sky/errors.js';
import { LEAP_SECOND_TABLE_INFO } from '../sky/time-scale.js';
import type { CommandIo } from './io.js';
import { UsageError } from './io.js';

type Options = NonNullable<ParseArgsConfig['options']>;

/**
 * Joins `--lon -105.5` into `--lon=-105.5` for string options, so negative
 * numbers (western longitudes, southern latitudes) are taken as values, not flags.
 */
export function joinNegativeValues(argv: readonly string[], options: Options): string[] {
  const out: string[] = [];
  for (let k = 0; k < argv.length; k++) {
    const arg = argv[k]!;
    const next = argv[k + 1];
    const name = arg.startsWith('--') ? arg.slice(2) : null;
    if (name !== null && !name.includes('=') && options[name]?.type === 'string' && next !== undefined && /^-\d/.test(next)) {
      out.push(`${arg}=${next}`);
      k += 1;
    } else out.push(arg);
  }
  return out;
}

/**
 * Parses a command's options (plus --help): unknown or malformed options become a
 * UsageError; with --help the text is printed and null is returned.
 */
export function parseCommandArgs<O extends Options>(
  argv: readonly string[],
  options: O,
  help: string,
  io: CommandIo,
): ReturnType<typeof parseArgs<{ args: string[]; options: O & { help: { type: 'boolean'; short: 'h' } } }>>['values'] | null {
  const all = { ...options, help: { type: 'boolean', short: 'h' } } as O & { help: { type: 'boolean'; short: 'h' } };
  let values;
  try {
    ({ values } = parseArgs({ args: joinNegativeValues(argv, all), options: all }));
  } catch (err) {
    throw new UsageError((err as Error).message);
  }
  if ((values as { help?: boolean }).help) {
    io.stdout(`${help}\n`);
    return null;
  }
  return values;
}

const ISO_UTC = /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}(:\d{2}(\.\d{1,9})?)?Z$/;

/** An option value as an ISO-8601 UTC instant (with Z). */
export function parseUtc(option: string, text: string): Date {
  const ms = ISO_UTC.test(text) ? Date.parse(text) : Number.NaN;
  if (!Number.isFinite(ms)) throw new UsageError(`${option}: "${text}" is not an ISO-8601 UTC time such as 2027-03-04T05:06:07Z`);
  return new Date(ms);
}

/** An option value as a whole number in [min, max]. */
export function parseWhole(option: string, text: string, min: number, max: number): number {
  const value = Number(text);
  if (!/^\d+$/.test(text.trim()) || !Number.isInteger(value) || value < min || value > max) {
    throw new UsageError(`${option}: "${text}" is not a whole number from ${min} to ${max}`);
  }
  return value;
}

/** An input error of a numeric floor: it names the field, the value and the reason. */
export type FieldInputError = SkyInputError | PhotometryInputError | OrbitInputError | EstimationInputError;

export function isFieldInputError(err: unknown): err is FieldInputError {
  return err instanceof SkyInputError || err instanceof PhotometryInputError || err instanceof OrbitInputError || err instanceof EstimationInputError;
}

/** A value as a user typed it: dates as ISO-8601 UTC, strings unquoted. */
export function shownValue(value: unknown): string {
  if (value instanceof Date) return Number.isNaN(value.getTime()) ? '(not a time)' : value.toISOString().replace('.000Z', 'Z');
  return String(value);
}

/**
 * A numeric floor's input error as a UsageError naming the command-line option
 * its field came from (`options` maps the floor's field names to options), or
 * null when the field came from none of them.
 */
export function asOptionError(err: unknown, options: Readonly<Record<string, string>>): UsageError | null {
  if (!isFieldInputError(err)) return null;
  const option = options[err.field];
  return option === undefined ? null : new UsageError(`${option} ${shownValue(err.value)}: ${err.reason}`);
}

const TABLE_FIRST_MS = Date.parse(LEAP_SECOND_TABLE_INFO.firstUtc);
const TABLE_END_MS = Date.parse(LEAP_SECOND_TABLE_INFO.validUntilUtc);

/** The leap-second table's first instant and validity horizon, as typed (ISO-8601 UTC without milliseconds). */
export const LEAP_TABLE_FIRST = shownValue(new Date(TABLE_FIRST_MS));
export const LEAP_TABLE_END = shownValue(new Date(TABLE_END_MS));

/** Why an instant outside the leap-second table is refused, quoting the limit; null inside it. */
export function outsideLeapSecondTable(timeMs: number): string | null {
  if (timeMs < TABLE_FIRST_MS) return `before ${LEAP_TABLE_FIRST}, where the leap-second table begins (UTC as now defined)`;
  if (timeMs >= TABLE_END_MS) {
    return (
      `past ${LEAP_TABLE_END}, where the leap-second table (${LEAP_SECOND_TABLE_INFO.source}, updated ${LEAP_SECOND_TABLE_INFO.updated}) ` +
      'stops being valid, so TT is not known there; give an earlier time, or update src/sky/leap-seconds.ts (DEVELOPERS.md, "Keeping the leap-second table current")'
    );
  }
  return null;
}

/**
 * An option value as an ISO-8601 UTC instant inside the leap-second table's
 * validity; with `span`, the `ms` after it (`what` names them) must be inside too.
 */
export function parseUtcInTable(option: string, text: string, span?: { ms: number; what: string }): Date {
  const t = parseUtc(option, text);
  const why = outsideLeapSecondTable(t.getTime());
  if (why !== null) throw new UsageError(`${option} ${text}: ${why.startsWith('past') ? `at or ${why}` : why}`);
  const after = span ? outsideLeapSecondTable(t.getTime() + span.ms) : null;
  if (span && after !== null) throw new UsageError(`${option} ${text}: ${span.what} reaches ${after}`);
  return t;
}
