#!/usr/bin/env node
import { realpathSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { ConfigError } from './config/load.js';
import { MigrationError } from './store/migrations.js';
import type { CommandIo, CommandMain } from './commands/io.js';
import { UsageError } from './commands/io.js';
import { isFieldInputError, shownValue } from './commands/args.js';
import { EstimationFailedError } from './orbit/estimation/errors.js';

/** Every command, loaded on demand so `nightjar night` does not load the HTTP server. */
const COMMANDS: Record<string, { summary: string; load: () => Promise<{ main: CommandMain }> }> = {
  serve: { summary: 'run the service (API, inbox, feeds, scheduled jobs)', load: () => import('./commands/serve.js') },
  migrate: { summary: 'apply pending database migrations', load: () => import('./commands/migrate.js') },
  'check-config': { summary: 'validate the configuration and list every problem', load: () => import('./commands/check-config.js') },
  plan: { summary: 'assess one notice and plan it for the sites, without the database', load: () => import('./commands/plan.js') },
  simulate: { summary: 'invent a night of discovery notices for the demo', load: () => import('./commands/simulate.js') },
  ephemeris: { summary: 'topocentric ephemeris of a notice from a site or a place', load: () => import('./commands/ephemeris.js') },
  night: { summary: "a site's night: Sun, twilight, Moon and dark hours", load: () => import('./commands/night.js') },
  exposure: { summary: 'exposure plan for a magnitude and rate at a site (imager or spectrograph)', load: () => import('./commands/exposure.js') },
};

/** Commands renamed in this release: the old name is refused with the new one, so a script fails loudly rather than silently. */
export const RENAMED_COMMANDS: Readonly<Record<string, string>> = { ephem: 'ephemeris' };

function usage(): string {
  const lines = Object.entries(COMMANDS).map(([name, c]) => `  ${name.padEnd(14)} ${c.summary}`);
  return `nightjar <command> [options]   (nightjar <command> --help for its options)\n\n${lines.join('\n')}\n`;
}

/** Runs one command line; returns the exit code. */
export async function runCli(argv: string[], io: CommandIo): Promise<number> {
  const [name, ...rest] = argv;
  if (name === undefined || name === '--help' || name === '-h' || name === 'help') {
    io.stdout(usage());
    return name === undefined ? 2 : 0;
  }
  const command = COMMANDS[name];
  if (!command) {
    const renamed = RENAMED_COMMANDS[name];
    if (renamed !== undefined) {
      io.stderr(`the command "${name}" is now called "${renamed}": run "nightjar ${renamed}" with the same options\n`);
      return 2;
    }
    io.stderr(`unknown command "${name}"\n\n${usage()}`);
    return 2;
  }
  try {
    const { main } = await command.load();
    return await main(rest, io);
  } catch (err) {
    if (err instanceof UsageError) {
      io.stderr(`nightjar ${name}: ${err.message}\n`);
      return 2;
    }
    if (err instanceof ConfigError || err instanceof MigrationError) {
      io.stderr(`nightjar ${name}: ${err.message}\n`);
      return 1;
    }
    // Input the numeric code refused (a command that knows the option has named it already): the value and the reason, no stack.
    if (isFieldInputError(err)) {
      io.stderr(`nightjar ${name}: ${shownValue(err.value)}: ${err.reason}\n`);
      return 1;
    }
    if (err instanceof EstimationFailedError) {
      io.stderr(`nightjar ${name}: no orbit could be estimated: ${err.message}\n`);
      return 1;
    }
    throw err;
  }
}

/** True when this file is the program being run (directly, or through the `nightjar` bin link). */
function isMainModule(): boolean {
  const script = process.argv[1];
  if (script === undefined) return false;
  try {
    return realpathSync(script) === realpathSync(fileURLToPath(import.meta.url));
  } catch {
    return false;
  }
}

const isMain = isMainModule();
if (isMain) {
  const io: CommandIo = {
    stdout: (t) => process.stdout.write(t),
    stderr: (t) => process.stderr.write(t),
    env: process.env,
    cwd: process.cwd(),
  };
  runCli(process.argv.slice(2), io).then(
    (code) => {
      process.exitCode = code;
    },
    (err: unknown) => {
      process.stderr.write(`nightjar: ${err instanceof Error ? (err.stack ?? err.message) : String(err)}\n`);
      process.exitCode = 1;
    },
  );
}
