import { ConfigError, loadConfig } from '../config/load.js';
import { parseCommandArgs } from './args.js';
import { LEAP_SECOND_TABLE_INFO } from '../sky/time-scale.js';
import type { CommandMain } from './io.js';

export const HELP = `nightjar check-config [--config FILE]

Validates the configuration (default: NIGHTJAR_CONFIG, else the embedded demo
config/default.json) and prints every problem by path. Exit 0 when valid, 1 when not.
A valid configuration's summary also says until when the leap-second table (UTC to
TT) is valid.`;

export const main: CommandMain = async (argv, io) => {
  const parsed = parseCommandArgs(argv, { config: { type: 'string' } }, HELP, io);
  if (parsed === null) return 0;
  const values = parsed;
  try {
    const config = loadConfig({ path: values.config, env: io.env, cwd: io.cwd });
    io.stdout(
      `configuration is valid: ${config.sites.length} site(s) (${config.sites.map((s) => s.id).join(', ')}), ` +
        `${config.service.feeds.length} feed(s), ${config.service.tokens.length} token(s), database ${config.service.databasePath}\n` +
        `leap-second table (${LEAP_SECOND_TABLE_INFO.source}, updated ${LEAP_SECOND_TABLE_INFO.updated}) valid until ${LEAP_SECOND_TABLE_INFO.validUntilUtc}: ` +
        'orbits are refused past it until src/sky/leap-seconds.ts is updated\n',
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
