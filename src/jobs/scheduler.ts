import cron, { type ScheduledTask } from 'node-cron';

/** A periodic job: a cron expression and the work it does. */
export interface JobSpec {
  name: string;
  schedule: string;
  /** `stopping` is aborted when the runner stops: a job that works through a list ends at once, leaving the rest for the next start. */
  run: (stopping?: AbortSignal) => Promise<void> | void;
}

export interface JobRunner {
  start(): void;
  /** Stops new runs, tells the running ones to stop taking work, and waits for them. */
  stop(): Promise<void>;
  /** Runs a job now (used at start and by tests); waits if the same job is already running. */
  runNow(name: string): Promise<void>;
}

export type JobErrorHandler = (job: string, err: unknown) => void;

/**
 * Schedules jobs with node-cron. The same job never overlaps itself: a tick that
 * comes while the previous run is still going is skipped.
 */
/** Where node-cron's own warnings (e.g. a tick missed while the thread was busy) go. */
export interface CronLogger {
  info(message: string): void;
  warn(message: string): void;
  error(message: string | Error, err?: Error): void;
  debug(message: string | Error, err?: Error): void;
}

export function createJobRunner(specs: readonly JobSpec[], onError: JobErrorHandler, cronLogger?: CronLogger): JobRunner {
  const running = new Map<string, Promise<void>>();
  const tasks: ScheduledTask[] = [];
  const stopping = new AbortController();

  function execute(spec: JobSpec): Promise<void> {
    if (stopping.signal.aborted) return Promise.resolve();
    const current = running.get(spec.name);
    if (current) return current;
    // Start on the next microtask so the entry is registered before a synchronous job finishes.
    const p = Promise.resolve()
      .then(() => spec.run(stopping.signal))
      .catch((err: unknown) => onError(spec.name, err))
      .finally(() => running.delete(spec.name));
    running.set(spec.name, p);
    return p;
  }

  return {
    start() {
      for (const spec of specs) {
        // Overlap is prevented by execute(): a tick while the job runs joins the running one.
        tasks.push(cron.schedule(spec.schedule, () => execute(spec), { name: spec.name, ...(cronLogger ? { logger: cronLogger } : {}) }));
      }
    },
    async stop() {
      stopping.abort();
      for (const t of tasks) await t.destroy();
      tasks.length = 0;
      await Promise.all([...running.values()]);
    },
    async runNow(name) {
      const spec = specs.find((s) => s.name === name);
      if (!spec) throw new Error(`no job named ${name}`);
      await execute(spec);
    },
  };
}
