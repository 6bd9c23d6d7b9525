import { parseArgs, type ParseArgsConfig } from 'node:util';
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
