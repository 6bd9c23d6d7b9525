import { ConfigError, loadConfig } from '../config/load.js';
import { parseCommandArgs } from './args.js';
import type { CommandMain } from './io.js';

export const HELP = `nightjar check-config [--config FILE]

Validates the configuration (default: NIGHTJAR_CONFIG, else the embedded demo
config/default.json) and prints every problem by path. Exit 0 when valid, 1 when not.`;

export const main: CommandMain = async (argv, io) => {
  const parsed = parseCommandArgs(argv, { config: { type: 'string' } }, HELP, io);
  if (parsed === null) return 0;
  const values = parsed;
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
