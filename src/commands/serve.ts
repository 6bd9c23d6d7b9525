import closeWithGrace from 'close-with-grace';
import { loadConfig } from '../config/load.js';
import { startService, type RunningService } from '../server.js';
import { parseCommandArgs } from './args.js';
import type { CommandMain } from './io.js';

export const HELP = `nightjar serve [--config FILE]

Runs the service: HTTP API, inbox and feed polling, scheduled jobs.
Environment: NIGHTJAR_CONFIG (config file), NIGHTJAR_PORT, NIGHTJAR_DB override the file.
Stops gracefully on SIGTERM or SIGINT, within service.workLimits.stopDeadlineS
(default 10 s) whatever the workers are doing; a second signal stops at once.
An uncaught error is logged and stops the service the same way (exit code 1).`;

/** Beyond the stop deadline, this long for the process to wind down before it is ended, ms. */
const EXIT_MARGIN_MS = 2000;

/** A listen error as a message that says what to do, or null for another error. */
export function listenProblem(err: unknown, host: string, port: number): string | null {
  const code = (err as { code?: unknown } | null)?.code;
  const where = `${host}:${port}`;
  if (code === 'EADDRINUSE') {
    return `cannot listen on ${where}: the port is in use (another nightjar, or another program); stop that, or set NIGHTJAR_PORT (or service.port in the configuration) to a free port`;
  }
  if (code === 'EACCES') return `cannot listen on ${where}: not allowed to use that port; set NIGHTJAR_PORT (or service.port) to one above 1023`;
  if (code === 'EADDRNOTAVAIL' || code === 'ENOTFOUND') return `cannot listen on ${where}: no such address on this machine; set service.host to one of its addresses (127.0.0.1, or 0.0.0.0 for all)`;
  return null;
}

export const main: CommandMain = async (argv, io) => {
  const parsed = parseCommandArgs(argv, { config: { type: 'string' } }, HELP, io);
  if (parsed === null) return 0;
  const values = parsed;
  const config = loadConfig({ path: values.config, env: io.env, cwd: io.cwd });
  let service: RunningService;
  try {
    service = await startService({ config });
  } catch (err) {
    const problem = listenProblem(err, config.service.host, config.service.port);
    if (problem === null) throw err;
    io.stderr(`nightjar serve: ${problem}\n`);
    return 1;
  }
  const deadlineS = config.service.workLimits.stopDeadlineS;
  const log = service.logger;
  // Signals, uncaught exceptions and unhandled rejections all stop the service within its deadline;
  // a second signal, or anything still holding the process past the deadline, ends it at once.
  closeWithGrace(
    {
      delay: deadlineS * 1000 + EXIT_MARGIN_MS,
      logger: false,
      onTimeout: (delayMs) => log.warn({ deadlineS, delayMs }, 'still running after the stop deadline: ending the process'),
      onSecondSignal: (signal) => log.warn({ signal }, 'second signal: stopping at once'),
      onSecondError: (err) => log.error({ err }, 'another uncaught error while stopping: ending the process'),
    },
    async ({ signal, err }) => {
      if (err) log.error({ err }, 'uncaught error: stopping the service');
      else log.info({ signal, deadlineS }, 'stopping');
      await service.stop();
    },
  );
  // The process ends when the stop is done (close-with-grace exits with 0 after a signal, 1 after an error).
  return await new Promise<number>(() => {});
};
