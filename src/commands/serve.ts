import { loadConfig } from '../config/load.js';
import { startService } from '../server.js';
import { parseCommandArgs } from './args.js';
import type { CommandMain } from './io.js';

export const HELP = `nightjar serve [--config FILE]

Runs the service: HTTP API, inbox and feed polling, scheduled jobs.
Environment: NIGHTJAR_CONFIG (config file), NIGHTJAR_PORT, NIGHTJAR_DB override the file.
Stops gracefully on SIGTERM or SIGINT.`;

export const main: CommandMain = async (argv, io) => {
  const parsed = parseCommandArgs(argv, { config: { type: 'string' } }, HELP, io);
  if (parsed === null) return 0;
  const values = parsed;
  const config = loadConfig({ path: values.config, env: io.env, cwd: io.cwd });
  const service = await startService({ config });
  await new Promise<void>((resolve) => {
    const onSignal = (signal: NodeJS.Signals) => {
      service.logger.info({ signal }, 'stopping');
      process.off('SIGTERM', onSignal);
      process.off('SIGINT', onSignal);
      void service.stop().then(resolve);
    };
    process.on('SIGTERM', onSignal);
    process.on('SIGINT', onSignal);
  });
  return 0;
};
