import { fileURLToPath } from 'node:url';
import { Piscina } from 'piscina';
import { TASK_STARTED, type TaskEnvelope, type TaskResult, type WorkerReply } from './worker-task.js';

export type { TaskFailure, TaskResult, WorkerReply } from './worker-task.js';

/**
 * Worker-thread pools for CPU-heavy work (assessments, on-demand estimates),
 * on piscina. What this adds around it:
 * - every task has a time limit, counted from when its worker starts it (not
 *   while a new worker loads); one that runs over is failed as `timeout` and
 *   its worker is stopped and replaced;
 * - each worker has a heap limit; a worker that stops (out of memory, exit)
 *   fails its task as `crashed` and is replaced;
 * - a task waits for a free worker at most `waitMs` (then `busy`, with a
 *   retry-after), when the pool says so;
 * - a worker script that cannot start fails its tasks as `unavailable` and is
 *   tried again only after `retryStartAfterMs`, never in a loop;
 * - whatever happens in the worker comes back as a typed value, never as a
 *   thrown class whose name has to be matched.
 */

export interface TaskPoolOptions {
  /** For messages, e.g. "assessment". */
  name: string;
  /** The worker entry module: its default export takes one input and answers a WorkerReply. TypeScript under tsx and vitest, JavaScript when built. */
  script: URL;
  /** Workers kept running. */
  threads: number;
  /** Tasks run at once (workers started as needed up to this; default `threads`). */
  maxConcurrent?: number;
  /** Time limit of one task, ms (a task may give its own). */
  taskTimeoutMs: number;
  /** Longest wait for a free worker before `busy`, ms; default: no limit. */
  waitMs?: number;
  /** Heap limit of each worker (V8 old generation), MB. */
  heapMb: number;
  /** After a worker failed to start, no new start is tried for this long, ms. */
  retryStartAfterMs?: number;
  /** Called when a worker cannot start. */
  onStartFailure?: (message: string) => void;
  now?: () => number;
}

export interface TaskPoolHealth {
  running: number;
  waiting: number;
  threads: number;
  /** Why the worker cannot start, while it cannot. */
  startFailure: string | null;
}

export interface TaskPool<I, O> {
  /** Runs one task; never rejects. */
  run(input: I, options?: { timeoutMs?: number }): Promise<TaskResult<O>>;
  health(): TaskPoolHealth;
  /** Takes no new task, waits for the running ones up to `graceMs`, then stops every worker (their tasks fail as `unavailable`). */
  close(graceMs?: number): Promise<void>;
}

const DEFAULT_RETRY_START_MS = 30_000;
/** Longest a task may wait for its worker to load before its time limit starts counting anyway, ms. */
const START_ALLOWANCE_MS = 30_000;

type AbortReason = { why: 'timeout' } | { why: 'start'; message: string } | { why: 'closed' };

interface Waiter {
  start: () => void;
  timer: NodeJS.Timeout | null;
}

/** The options piscina needs to run `script`: TypeScript sources load through tsx, as the tests and `npm run nightjar` run them. */
function scriptOptions(script: URL): { filename: string; execArgv?: string[] } {
  const filename = fileURLToPath(script);
  if (!filename.endsWith('.ts')) return { filename };
  return { filename, execArgv: ['--import', import.meta.resolve('tsx')] };
}

function isCrash(err: Error & { code?: string }): boolean {
  return err.code === 'ERR_WORKER_OUT_OF_MEMORY' || /worker exited with code/i.test(err.message) || /Terminating worker thread/.test(err.message);
}

export function createTaskPool<I, O>(options: TaskPoolOptions): TaskPool<I, O> {
  const now = options.now ?? Date.now;
  const capacity = Math.max(1, options.maxConcurrent ?? options.threads);
  const retryStartAfterMs = options.retryStartAfterMs ?? DEFAULT_RETRY_START_MS;
  const inFlight = new Set<AbortController>();
  const waiting: Waiter[] = [];
  let running = 0;
  let closed = false;
  let startFailure: { message: string; atMs: number } | null = null;
  let pool: Piscina | null = null;
  let nextTaskId = 1;
  /** Tasks handed to piscina whose worker has not yet said it started them: what to do when it does. */
  const starting = new Map<number, () => void>();

  function makePool(): Piscina {
    const p = new Piscina({
      ...scriptOptions(options.script),
      minThreads: Math.max(1, options.threads),
      maxThreads: capacity,
      idleTimeout: 60_000,
      resourceLimits: { maxOldGenerationSizeMb: options.heapMb },
    });
    p.on('message', (message: unknown) => {
      if (typeof message !== 'object' || message === null || !(TASK_STARTED in message)) return;
      const id = (message as Record<string, unknown>)[TASK_STARTED];
      if (typeof id === 'number') starting.get(id)?.();
    });
    // An error with no task to fail: a worker failed while starting (or outside a task). With no worker left, the script cannot start.
    p.on('error', (err: Error) => {
      if (p !== pool || p.threads.length > 0) return;
      startFailure = { message: err.message, atMs: now() };
      options.onStartFailure?.(err.message);
      for (const controller of inFlight) controller.abort({ why: 'start', message: err.message } satisfies AbortReason);
    });
    return p;
  }

  function currentPool(): Piscina | null {
    if (startFailure) {
      if (now() - startFailure.atMs < retryStartAfterMs) return null;
      // Time to try again: a fresh pool, whose first worker is started anew.
      const old = pool;
      pool = null;
      startFailure = null;
      void old?.destroy();
    }
    pool ??= makePool();
    return pool;
  }

  function release(): void {
    running -= 1;
    const next = waiting.shift();
    if (next) {
      if (next.timer) clearTimeout(next.timer);
      next.start();
    }
  }

  async function execute(input: I, timeoutMs: number): Promise<TaskResult<O>> {
    const unavailable = (message: string): TaskResult<O> => ({ ok: false, failure: { kind: 'unavailable', message } });
    if (closed) return unavailable(`the ${options.name} workers are stopping`);
    const p = currentPool();
    if (!p) return unavailable(`the ${options.name} worker cannot start: ${startFailure?.message ?? 'unknown error'}`);
    const controller = new AbortController();
    inFlight.add(controller);
    const taskId = nextTaskId++;
    const overTime = () => controller.abort({ why: 'timeout' } satisfies AbortReason);
    // The limit counts from when the worker starts the task; a worker that never gets there is stopped too.
    let timer = setTimeout(overTime, START_ALLOWANCE_MS + timeoutMs);
    starting.set(taskId, () => {
      starting.delete(taskId);
      clearTimeout(timer);
      timer = setTimeout(overTime, timeoutMs);
    });
    try {
      const envelope: TaskEnvelope<I> = { taskId, input };
      const reply = (await p.run(envelope, { signal: controller.signal })) as WorkerReply<O>;
      return reply.ok ? { ok: true, value: reply.value } : { ok: false, failure: reply.failure };
    } catch (err) {
      const reason = controller.signal.aborted ? (controller.signal.reason as AbortReason) : null;
      if (reason?.why === 'timeout')
        return { ok: false, failure: { kind: 'timeout', message: `the ${options.name} ran over its time limit of ${(timeoutMs / 1000).toFixed(1)} s and was stopped`, limitMs: timeoutMs } };
      if (reason?.why === 'start') return unavailable(`the ${options.name} worker cannot start: ${reason.message}`);
      if (reason?.why === 'closed' || closed) return unavailable(`the ${options.name} workers were stopped (the service is stopping)`);
      const e = err instanceof Error ? (err as Error & { code?: string }) : new Error(String(err));
      if (isCrash(e)) return { ok: false, failure: { kind: 'crashed', message: `the ${options.name} worker stopped during the task (${e.message}); a new worker replaces it` } };
      return { ok: false, failure: { kind: 'error', message: e.message } };
    } finally {
      clearTimeout(timer);
      starting.delete(taskId);
      inFlight.delete(controller);
    }
  }

  return {
    async run(input, runOptions = {}) {
      const timeoutMs = runOptions.timeoutMs ?? options.taskTimeoutMs;
      if (closed) return { ok: false, failure: { kind: 'unavailable', message: `the ${options.name} workers are stopping` } };
      if (running >= capacity) {
        const admitted = await new Promise<boolean>((resolve) => {
          const waiter: Waiter = { start: () => resolve(true), timer: null };
          if (options.waitMs !== undefined) {
            waiter.timer = setTimeout(() => {
              const k = waiting.indexOf(waiter);
              if (k >= 0) waiting.splice(k, 1);
              resolve(false);
            }, options.waitMs);
          }
          waiting.push(waiter);
        });
        if (!admitted) {
          const retryAfterS = Math.max(1, Math.ceil((options.waitMs ?? 1000) / 1000));
          return { ok: false, failure: { kind: 'busy', message: `the ${options.name} worker is busy; ask again in ${retryAfterS} s`, retryAfterS } };
        }
      }
      running += 1;
      try {
        return await execute(input, timeoutMs);
      } finally {
        release();
      }
    },
    health() {
      return { running, waiting: waiting.length, threads: pool?.threads.length ?? 0, startFailure: startFailure?.message ?? null };
    },
    async close(graceMs = 0) {
      closed = true;
      for (const w of waiting.splice(0)) {
        if (w.timer) clearTimeout(w.timer);
        w.start();
      }
      const p = pool;
      pool = null;
      if (!p) return;
      if (graceMs > 0 && inFlight.size > 0) {
        const end = now() + graceMs;
        while (inFlight.size > 0 && now() < end) await new Promise((r) => setTimeout(r, 25));
      }
      for (const controller of inFlight) controller.abort({ why: 'closed' } satisfies AbortReason);
      await p.destroy();
    },
  };
}
