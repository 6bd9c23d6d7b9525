import { Worker } from 'node:worker_threads';

/**
 * A fixed pool of worker threads running one script; CPU-heavy assessments run
 * there so the API thread keeps answering. Each worker handles one task at a time.
 */
export interface WorkerPool<I, O> {
  run(input: I): Promise<O>;
  readonly size: number;
  /** Tasks waiting for a free worker. */
  pending(): number;
  close(): Promise<void>;
}

interface Task<I, O> {
  id: number;
  input: I;
  resolve: (o: O) => void;
  reject: (e: Error) => void;
}

type Reply<O> = { id: number; ok: true; output: O } | { id: number; ok: false; error: string; name: string };

/** Thrown in the caller when the task failed inside the worker; carries the worker's message. */
export class WorkerTaskError extends Error {
  constructor(message: string, readonly remoteName: string) {
    super(message);
    this.name = 'WorkerTaskError';
  }
}

/** Under tsx/vitest the worker script is TypeScript: a small bootstrap registers the tsx loader first. Built code runs as is. */
function startWorker(script: URL): Worker {
  if (!script.pathname.endsWith('.ts')) return new Worker(script);
  const bootstrap = `import('tsx/esm/api').then((m) => { m.register(); return import(${JSON.stringify(script.href)}); })`;
  return new Worker(bootstrap, { eval: true });
}

export function createWorkerPool<I, O>(script: URL, size: number): WorkerPool<I, O> {
  const queue: Task<I, O>[] = [];
  const idle: Worker[] = [];
  const busy = new Map<Worker, Task<I, O>>();
  let nextId = 1;
  let closed = false;

  function spawn(): Worker {
    const w = startWorker(script);
    w.on('message', (reply: Reply<O>) => {
      const task = busy.get(w);
      busy.delete(w);
      if (task && task.id === reply.id) {
        if (reply.ok) task.resolve(reply.output);
        else task.reject(new WorkerTaskError(reply.error, reply.name));
      }
      idle.push(w);
      pump();
    });
    w.on('error', (err) => {
      const task = busy.get(w);
      busy.delete(w);
      task?.reject(err instanceof Error ? err : new Error(String(err)));
      // Replace the dead worker.
      if (!closed) {
        idle.push(spawn());
        pump();
      }
    });
    return w;
  }

  function pump(): void {
    while (!closed && idle.length > 0 && queue.length > 0) {
      const w = idle.pop()!;
      const task = queue.shift()!;
      busy.set(w, task);
      w.postMessage({ id: task.id, input: task.input });
    }
  }

  for (let k = 0; k < size; k++) idle.push(spawn());

  return {
    size,
    run(input) {
      if (closed) return Promise.reject(new Error('worker pool is closed'));
      return new Promise<O>((resolve, reject) => {
        queue.push({ id: nextId++, input, resolve, reject });
        pump();
      });
    },
    pending: () => queue.length,
    async close() {
      closed = true;
      for (const t of queue.splice(0)) t.reject(new Error('worker pool closed'));
      const all = [...idle, ...busy.keys()];
      await Promise.all(all.map((w) => w.terminate()));
    },
  };
}

/** Serves a pool task handler inside a worker thread. */
export async function serveWorkerTasks<I, O>(handle: (input: I) => O | Promise<O>): Promise<void> {
  const { parentPort } = await import('node:worker_threads');
  if (!parentPort) throw new Error('serveWorkerTasks must run inside a worker thread');
  const port = parentPort;
  port.on('message', async (msg: { id: number; input: I }) => {
    try {
      const output = await handle(msg.input);
      port.postMessage({ id: msg.id, ok: true, output });
    } catch (err) {
      const e = err instanceof Error ? err : new Error(String(err));
      port.postMessage({ id: msg.id, ok: false, error: e.message, name: e.name });
    }
  });
}
