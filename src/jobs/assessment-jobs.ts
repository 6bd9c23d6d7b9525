import { availableParallelism } from 'node:os';
import type { Config } from '../config/schema.js';
import { weightsFromConfig } from '../planning/assess.js';
import type { Store } from '../store/index.js';
import type { ServiceMetrics } from '../telemetry/metrics.js';
import type { AssessTask } from './assess-worker.js';
import { createAssessmentRunner, type AssessmentRunner, type AssessOutput } from './assessment-runner.js';
import type { JobSpec } from './scheduler.js';
import { createWorkerPool, type WorkerPool } from './worker-pool.js';

/** The worker script beside this module (TypeScript under tsx and vitest, JavaScript when built). */
export function assessWorkerUrl(): URL {
  const ext = import.meta.url.endsWith('.ts') ? '.ts' : '.js';
  return new URL(`./assess-worker${ext}`, import.meta.url);
}

export function defaultWorkerCount(config: Config): number {
  return config.service.workers ?? Math.max(1, availableParallelism() - 1);
}

export interface AssessmentService {
  runner: AssessmentRunner;
  pool: WorkerPool<AssessTask, AssessOutput>;
  jobs: JobSpec[];
  /** Take no new work; what is running finishes. */
  halt(): void;
  close(): Promise<void>;
}

/** The worker pool, the runner that feeds it from the work table, and the drain and replan jobs. */
export function createAssessmentService(deps: {
  config: Config;
  store: Store;
  clock: () => Date;
  metrics?: ServiceMetrics;
  log?: { info: (o: object, m: string) => void; warn: (o: object, m: string) => void };
  workers?: number;
}): AssessmentService {
  const { config } = deps;
  const size = deps.workers ?? defaultWorkerCount(config);
  const pool = createWorkerPool<AssessTask, AssessOutput>(assessWorkerUrl(), size);
  const weights = weightsFromConfig(config.planning.weights);
  const runner = createAssessmentRunner({
    config,
    store: deps.store,
    clock: deps.clock,
    concurrency: size,
    ...(deps.metrics ? { metrics: deps.metrics } : {}),
    ...(deps.log ? { log: deps.log } : {}),
    assessor: (input) =>
      pool.run({ input, sites: config.sites, horizonH: config.planning.horizonH, members: config.planning.members, weights, rangePrior: config.planning.rangePrior }),
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
    close: () => pool.close(),
  };
}
