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
