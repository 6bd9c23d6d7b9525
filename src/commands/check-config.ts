import { parseArgs } from 'node:util';
import { ConfigError, loadConfig } from '../config/load.js';
import type { CommandMain } from './io.js';
import { UsageError } from './io.js';

export const HELP = `nightjar check-config [--config FILE]

Validates the configuration (default: NIGHTJAR_CONFIG, else the embedded demo
config/default.json) and prints every problem by path. Exit 0 when valid, 1 when not.`;

export const main: CommandMain = async (argv, io) => {
  let values: { config?: string | undefined; help?: boolean | undefined };
  try {
    ({ values } = parseArgs({ args: argv, options: { config: { type: 'string' }, help: { type: 'boolean', short: 'h' } } }));
  } catch (err) {
    throw new UsageError((err as Error).message);
  }
  if (values.help) {
    io.stdout(`${HELP}\n`);
    return 0;
  }
  try {
    const config = loadConfig({ path: values.config, env: io.env, cwd: io.cwd });
    io.stdout(
      `configuration is valid: ${config.sites.length} site(s) (${config.sites.map((s) => s.id).join(', ')}), ` +
        `${config.service.feeds.length} feed(s), ${config.service.tokens.length} token(s), database ${config.service.databasePath}\n`,
    );
    return 0;
  } catch (err) {
    if (err instanceof ConfigError) {
      io.stderr(`${err.message}\n`);
      return 1;
    }
    throw err;
  }
};
