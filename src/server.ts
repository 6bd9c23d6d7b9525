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
import { withRefusals } from './api/on-demand.js';
import { createOnDemandEstimates, isEstimatorRefusal } from './jobs/on-demand-estimates.js';

export interface RunningService {
  app: FastifyInstance;
  store: Store;
  jobs: JobRunner;
  assessment: AssessmentService;
  logger: Logger;
  /** The address it listens on, e.g. http://127.0.0.1:8470 */
  url: string;
  /** Graceful stop: no new cron runs, wait for running ones, close HTTP, close the database. */
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

  const metrics = createServiceMetrics();
  const intake = createIntake({
    notices: store.notices,
    clock,
    futureToleranceMin: config.service.futureToleranceMin,
    observe: (source, r) => metrics.noticesReceived.inc({ source: source.split(':')[0] ?? source, result: r.status }),
  });
  // Routes that queue work start the assessment job at once (bound once the jobs exist).
  let startAssessing: () => void = () => {};
  const workerEstimates = createOnDemandEstimates({ store, members: config.planning.members, clock, rangePrior: config.planning.rangePrior });
  const app = await buildApp({
    onDemand: withRefusals(workerEstimates, isEstimatorRefusal),
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
  const assessment = createAssessmentService({ config, store, clock, metrics, log, ...(options.workers !== undefined ? { workers: options.workers } : {}) });
  const jobs = createJobRunner(
    [
      ...intakeJobs({ config, store, intake, clock, log, metrics }),
      ...assessment.jobs,
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
    await assessment.close();
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
    assessment,
    logger,
    url: address,
    stop() {
      stopping ??= (async () => {
        assessment.halt();
        await jobs.stop();
        await assessment.close();
        await app.close();
        await workerEstimates.close();
        store.db.close();
        logger.info('nightjar stopped');
      })();
      return stopping;
    },
  };
}
