import { loadConfig } from '../config/load.js';
import { startService } from '../server.js';
import { parseCommandArgs } from './args.js';
import type { CommandMain } from './io.js';

export const HELP = `nightjar serve [--config FILE]

Runs the service: HTTP API, inbox and feed polling, scheduled jobs.
Environment: NIGHTJAR_CONFIG (config file), NIGHTJAR_PORT, NIGHTJAR_DB override the file.
Stops gracefully on SIGTERM or SIGINT, within service.workLimits.stopDeadlineS
(default 10 s) whatever the workers are doing; a second signal stops at once.`;

/** Beyond the stop deadline, this long for the process to wind down before it is ended, ms. */
const EXIT_MARGIN_MS = 2000;

export const main: CommandMain = async (argv, io) => {
  const parsed = parseCommandArgs(argv, { config: { type: 'string' } }, HELP, io);
  if (parsed === null) return 0;
  const values = parsed;
  const config = loadConfig({ path: values.config, env: io.env, cwd: io.cwd });
  const service = await startService({ config });
  await new Promise<void>((resolve) => {
    const onSignal = (signal: NodeJS.Signals) => {
      service.logger.info({ signal, deadlineS: config.service.workLimits.stopDeadlineS }, 'stopping');
      process.off('SIGTERM', onSignal);
      process.off('SIGINT', onSignal);
      // A second signal, or anything still holding the process after the deadline, ends it.
      const now = () => {
        service.logger.warn({ signal }, 'stopping at once');
        process.exit(1);
      };
      process.once('SIGTERM', now);
      process.once('SIGINT', now);
      setTimeout(() => {
        service.logger.warn({ deadlineS: config.service.workLimits.stopDeadlineS }, 'still running after the stop deadline: ending the process');
        process.exit(1);
      }, config.service.workLimits.stopDeadlineS * 1000 + EXIT_MARGIN_MS).unref();
      void service.stop().then(resolve);
    };
    process.on('SIGTERM', onSignal);
    process.on('SIGINT', onSignal);
  });
  return 0;
};
