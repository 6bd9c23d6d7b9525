import pino, { type Logger } from 'pino';
import type { FastifyInstance } from 'fastify';
import { buildApp } from './api/app.js';
import { DEMO_NOTICES_DIR, MIGRATIONS_DIR } from './config/load.js';
import type { Config } from './config/schema.js';
import { feedSourceName } from './intake/feed.js';
import { ensureInboxFolders, seedInbox } from './intake/inbox.js';
import { createIntake } from './intake/ingest.js';
import { createAssessmentService, type AssessmentService } from './jobs/assessment-jobs.js';
import { demoJobs, writeSimulatedNotices } from './jobs/demo-jobs.js';
import { intakeJobs } from './jobs/intake-jobs.js';
import { requestJobs } from './jobs/request-jobs.js';
import { webhookJobs } from './jobs/webhooks.js';
import { createServiceMetrics } from './telemetry/metrics.js';
import { createJobRunner, type JobRunner } from './jobs/scheduler.js';
import { openStore, type Store } from './store/index.js';
import { withFailures } from './api/on-demand.js';
import { classifyOnDemandFailure, createOnDemandEstimates } from './jobs/on-demand-estimates.js';

export interface RunningService {
  app: FastifyInstance;
  store: Store;
  jobs: JobRunner;
  assessment: AssessmentService;
  logger: Logger;
  /** The address it listens on, e.g. http://127.0.0.1:8470 */
  url: string;
  /**
   * Graceful stop, over within `service.workLimits.stopDeadlineS` whatever the
   * workers do: no new work; running assessments get half the deadline to
   * finish, then their workers are stopped (their objects wait for the next
   * start); HTTP closes (connections still open at the deadline are cut); the
   * database closes.
   */
  stop(): Promise<void>;
}

export interface StartOptions {
  config: Config;
  clock?: () => Date;
  logger?: Logger;
  migrationsDir?: string;
  demoNoticesDir?: string;
  /** Start the cron jobs (default true). */
  schedule?: boolean;
  /** Worker threads for assessments (default from config, else cores - 1). */
  workers?: number;
  /** Other worker entries (tests): the assessment's and the on-demand estimate's. */
  workerScripts?: { assessment?: URL; estimate?: URL };
}

/** Starts the service: migrate, seed the demo inbox, listen, schedule jobs, then read the inbox once. */
export async function startService(options: StartOptions): Promise<RunningService> {
  const { config } = options;
  const clock = options.clock ?? (() => new Date());
  const logger = options.logger ?? pino({ level: config.service.logLevel, base: { service: 'nightjar' } });
  const migrationsDir = options.migrationsDir ?? MIGRATIONS_DIR;
  const store = openStore(config.service.databasePath, migrationsDir, clock);
  const requeued = store.work.requeueRunning(clock());
  if (requeued > 0) logger.info({ requeued }, 'work items left running by a previous process are waiting again');

  const inbox = config.service.inbox;
  ensureInboxFolders(inbox.path);
  if (inbox.seedDemo) {
    const seeded = seedInbox(
      inbox.path,
      config.demo.simulate
        ? (dir) => writeSimulatedNotices(dir, clock(), config.demo.seedCount, 1)
        : (options.demoNoticesDir ?? DEMO_NOTICES_DIR),
    );
    if (seeded.length > 0)
      logger.info({ inbox: inbox.path, files: seeded, simulated: config.demo.simulate }, 'demo inbox seeded');
  }

  const metrics = createServiceMetrics({ processMetrics: true });
  const intake = createIntake({
    notices: store.notices,
    clock,
    futureToleranceMin: config.service.futureToleranceMin,
    observe: (source, r) => metrics.noticesReceived.inc({ source: source.split(':')[0] ?? source, result: r.status }),
  });
  // Routes that queue work start the assessment job at once (bound once the jobs exist).
  let startAssessing: () => void = () => {};
  const limits = config.service.workLimits;
  const workerEstimates = createOnDemandEstimates({
    store,
    members: config.planning.members,
    clock,
    rangePrior: config.planning.rangePrior,
    timeLimitMs: limits.estimateS * 1000,
    waitMs: limits.estimateWaitMs,
    heapMb: limits.workerHeapMb,
    ...(options.workerScripts?.estimate ? { workerScript: options.workerScripts.estimate } : {}),
  });
  let assessment: AssessmentService | null = null;
  const app = await buildApp({
    onDemand: withFailures(workerEstimates, classifyOnDemandFailure),
    problems: () => {
      const start = assessment?.pool.health().startFailure ?? null;
      return [...(start ? [`the assessment worker cannot start: ${start}`] : []), ...[workerEstimates.problem()].filter((p): p is string => p !== null)];
    },
    config,
    store,
    clock,
    migrationsDir,
    intake,
    metrics,
    logger: logger.child({ part: 'api' }),
    sourceNames: ['inbox', ...config.service.feeds.map(feedSourceName)],
    onWorkQueued: () => startAssessing(),
  });
  const jobLog = logger.child({ part: 'jobs' });
  const log = { info: (o: object, m: string) => jobLog.info(o, m), warn: (o: object, m: string) => jobLog.warn(o, m) };
  const assessmentService = createAssessmentService({
    config,
    store,
    clock,
    metrics,
    log,
    ...(options.workers !== undefined ? { workers: options.workers } : {}),
    ...(options.workerScripts?.assessment ? { workerScript: options.workerScripts.assessment } : {}),
  });
  assessment = assessmentService;
  const jobs = createJobRunner(
    [
      ...intakeJobs({ config, store, intake, clock, log, metrics, workQueued: () => startAssessing() }),
      ...assessmentService.jobs,
      ...requestJobs({ config, store, clock, log }),
      ...webhookJobs({ config, store, clock, metrics, log }),
      ...demoJobs({ config, clock, log }),
    ],
    (job, err) => jobLog.error({ job, err }, 'job failed'),
    {
      info: (m) => jobLog.debug({ scheduler: m }, 'cron'),
      warn: (m) => jobLog.warn({ scheduler: m }, 'cron'),
      error: (m, e) => jobLog.error({ scheduler: String(m), err: e }, 'cron'),
      debug: (m) => jobLog.debug({ scheduler: String(m) }, 'cron'),
    },
  );
  startAssessing = () => void jobs.runNow('assess');
  let address: string;
  try {
    address = await app.listen({ host: config.service.host, port: config.service.port });
  } catch (err) {
    await assessmentService.close();
    await workerEstimates.close();
    store.db.close();
    throw err;
  }
  logger.info({ url: address, database: config.service.databasePath, inbox: inbox.path, sites: config.sites.map((s) => s.id) }, 'nightjar listening');
  if (options.schedule !== false) jobs.start();
  // Read what is already waiting without waiting for the first tick (settled files only).
  void jobs.runNow('scan-inbox').then(() => jobs.runNow('assess'));

  let stopping: Promise<void> | null = null;
  return {
    app,
    store,
    jobs,
    assessment: assessmentService,
    logger,
    url: address,
    stop() {
      stopping ??= (async () => {
        const deadlineMs = limits.stopDeadlineS * 1000;
        const end = Date.now() + deadlineMs;
        const left = () => Math.max(0, end - Date.now());
        const late: string[] = [];
        const within = async (what: string, work: Promise<unknown>, ms: number): Promise<void> => {
          let timer: NodeJS.Timeout | undefined;
          const timeout = new Promise<'late'>((r) => (timer = setTimeout(() => r('late'), ms)));
          const outcome = await Promise.race([work.then(() => 'done' as const, () => 'done' as const), timeout]);
          clearTimeout(timer);
          if (outcome === 'late') late.push(what);
        };
        assessmentService.halt();
        // Running assessments may finish within half the deadline; then their workers are stopped and the jobs waiting on them return.
        const workers = Promise.all([assessmentService.close(deadlineMs / 2), workerEstimates.close(0)]);
        await within('scheduled jobs', jobs.stop(), left() * 0.8);
        await within('worker threads', workers, left() * 0.5);
        const httpClosed = app.close();
        await within('HTTP connections', httpClosed, left() * 0.5);
        if (late.includes('HTTP connections')) app.server.closeAllConnections();
        store.db.close();
        logger.info({ deadlineS: limits.stopDeadlineS, cutShort: late }, 'nightjar stopped');
      })();
      return stopping;
    },
  };
}
