import { availableParallelism } from 'node:os';
import type { Config } from '../config/schema.js';
import { weightsFromConfig } from '../planning/assess.js';
import type { Store } from '../store/index.js';
import type { ServiceMetrics } from '../telemetry/metrics.js';
import type { AssessTask } from './assess-worker.js';
import { createAssessmentRunner, type AssessmentRunner, type AssessOutput } from './assessment-runner.js';
import type { JobSpec } from './scheduler.js';
import { createTaskPool, type TaskPool } from './task-pool.js';

/** The worker script beside this module (TypeScript under tsx and vitest, JavaScript when built). */
export function assessWorkerUrl(): URL {
  const ext = import.meta.url.endsWith('.ts') ? '.ts' : '.js';
  return new URL(`./assess-worker${ext}`, import.meta.url);
}

/**
 * Assessment workers unless `service.workers` says otherwise: all cores but one, which stays for
 * the API thread (measured in docs/performance.md, "Worker threads": on two cores a second worker
 * gained little and slowed the API and the replans, whose kept work lives in one worker).
 */
export function defaultWorkerCount(config: Config): number {
  return config.service.workers ?? Math.max(1, availableParallelism() - 1);
}

export interface AssessmentService {
  runner: AssessmentRunner;
  pool: TaskPool<AssessTask, AssessOutput>;
  jobs: JobSpec[];
  /** Take no new work; what is running finishes. */
  halt(): void;
  /** Waits up to `graceMs` for running assessments, then stops the workers (their objects wait for the next start). */
  close(graceMs?: number): Promise<void>;
}

/**
 * The worker pool, the runner that feeds it from the work table, and the drain
 * and replan jobs. Each assessment runs under `workLimits.assessmentS` in a
 * worker with `workLimits.workerHeapMb` of heap; one running longer than
 * `workLimits.slowAssessmentS` lets the next object start beside it.
 */
export function createAssessmentService(deps: {
  config: Config;
  store: Store;
  clock: () => Date;
  metrics?: ServiceMetrics;
  log?: { info: (o: object, m: string) => void; warn: (o: object, m: string) => void };
  workers?: number;
  /** Another worker entry (tests): its default export answers an AssessTask with a WorkerReply. */
  workerScript?: URL;
}): AssessmentService {
  const { config } = deps;
  const limits = config.service.workLimits;
  const size = deps.workers ?? defaultWorkerCount(config);
  const pool = createTaskPool<AssessTask, AssessOutput>({
    name: 'assessment',
    script: deps.workerScript ?? assessWorkerUrl(),
    threads: size,
    // Room beside assessments that turned slow (see the runner's slowAfterMs).
    maxConcurrent: 2 * size,
    taskTimeoutMs: limits.assessmentS * 1000,
    heapMb: limits.workerHeapMb,
    onStartFailure: (message) => deps.log?.warn({ error: message }, 'the assessment worker cannot start; objects wait'),
  });
  const weights = weightsFromConfig(config.planning.weights);
  const runner = createAssessmentRunner({
    config,
    store: deps.store,
    clock: deps.clock,
    concurrency: size,
    slowAfterMs: limits.slowAssessmentS * 1000,
    firstLookBacklog: config.planning.firstLookBacklog,
    ...(deps.metrics ? { metrics: deps.metrics } : {}),
    ...(deps.log ? { log: deps.log } : {}),
    assessor: (input) =>
      pool.run({
        input,
        sites: config.sites,
        horizonH: config.planning.horizonH,
        members: config.planning.members,
        weights,
        rangePrior: config.planning.rangePrior,
        reuseMb: config.planning.reuseMb,
      }),
  });
  const jobs: JobSpec[] = [
    { name: 'assess', schedule: '*/2 * * * * *', run: async () => void (await runner.drain()) },
    {
      name: 'replan',
      schedule: config.service.schedules.replan,
      run: async () => {
        const n = runner.enqueueActive();
        deps.log?.info({ objects: n }, 'replanning active objects');
        await runner.drain();
      },
    },
  ];
  return {
    runner,
    pool,
    jobs,
    halt: () => runner.halt(),
    close: (graceMs = 0) => pool.close(graceMs),
  };
}
