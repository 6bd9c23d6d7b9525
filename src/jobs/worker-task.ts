import { parentPort } from 'node:worker_threads';

/**
 * What crosses the worker-thread boundary: a task's answer or its failure, as
 * typed values. A worker entry wraps its handler with workerTask, so nothing
 * it throws has to be recognised by its class name on the other side. The
 * wrapper also tells the pool when the task starts (after the worker has
 * loaded), so a time limit counts the task, not the start of a new worker.
 */

/** What the pool sends: the task's input with its number. */
export interface TaskEnvelope<I> {
  taskId: number;
  input: I;
}

/** The key of the message a worker posts when it starts a task (its value is the task's number). */
export const TASK_STARTED = 'nightjarTaskStarted';

/** Why a task did not give an answer. */
export type TaskFailure =
  /** The task's input was refused by a numeric module (a typed refusal inside the worker). */
  | { kind: 'refused'; message: string }
  /** The task failed inside the worker for another reason. */
  | { kind: 'error'; message: string }
  /** The task ran over its time limit; its worker was stopped and is replaced. */
  | { kind: 'timeout'; message: string; limitMs: number }
  /** The worker thread stopped during the task (out of memory, exit); another replaces it. */
  | { kind: 'crashed'; message: string }
  /** No worker became free within the pool's wait. */
  | { kind: 'busy'; message: string; retryAfterS: number }
  /** The worker cannot start, or the pool was closed. */
  | { kind: 'unavailable'; message: string };

export type TaskResult<O> = { ok: true; value: O } | { ok: false; failure: TaskFailure };

/** What a worker entry answers: its value, or its own failure as a value (never a thrown error). */
export type WorkerReply<O> = { ok: true; value: O } | { ok: false; failure: { kind: 'refused' | 'error'; message: string } };

/**
 * Wraps a task handler as a worker entry: its result, or what it threw as a
 * typed failure (`refused` when `isRefusal` says the input was refused).
 */
export function workerTask<I, O>(handle: (input: I) => O | Promise<O>, isRefusal: (err: unknown) => boolean): (envelope: TaskEnvelope<I>) => Promise<WorkerReply<O>> {
  return async (envelope) => {
    parentPort?.postMessage({ [TASK_STARTED]: envelope.taskId });
    try {
      return { ok: true, value: await handle(envelope.input) };
    } catch (err) {
      const message = err instanceof Error ? err.message : String(err);
      return { ok: false, failure: { kind: isRefusal(err) ? 'refused' : 'error', message } };
    }
  };
}

