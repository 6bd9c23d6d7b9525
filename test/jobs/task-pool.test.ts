import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { createTaskPool, type TaskPool } from '../../src/jobs/task-pool.js';
import type { SquareInput } from './fixtures/square-worker.js';
import { tempDir } from '../helpers.js';

const square = new URL('./fixtures/square-worker.ts', import.meta.url);
const broken = new URL('./fixtures/broken-worker.mjs', import.meta.url);

const pools: TaskPool<unknown, unknown>[] = [];
afterEach(async () => {
  for (const p of pools.splice(0)) await p.close();
});

function squarePool(options: { threads?: number; taskTimeoutMs?: number; waitMs?: number; heapMb?: number } = {}): TaskPool<SquareInput, { square: number }> {
  const pool = createTaskPool<SquareInput, { square: number }>({
    name: 'test',
    script: square,
    threads: options.threads ?? 1,
    taskTimeoutMs: options.taskTimeoutMs ?? 60_000,
    heapMb: options.heapMb ?? 256,
    ...(options.waitMs !== undefined ? { waitMs: options.waitMs } : {}),
  });
  pools.push(pool);
  return pool;
}

describe('task pool', () => {
  it('runs tasks in worker threads and returns their results', async () => {
    const pool = squarePool({ threads: 2 });
    const results = await Promise.all([1, 2, 3, 4, 5].map((n) => pool.run({ n })));
    expect(results).toEqual([1, 4, 9, 16, 25].map((square) => ({ ok: true, value: { square } })));
  });

  it('brings a refusal inside the worker back as a typed value with its message', async () => {
    const pool = squarePool();
    expect(await pool.run({ n: -2 })).toEqual({ ok: false, failure: { kind: 'refused', message: 'n must not be negative, got -2' } });
    expect(await pool.run({ n: 1, fault: true })).toEqual({ ok: false, failure: { kind: 'error', message: 'something inside went wrong' } });
    expect(await pool.run({ n: 3 })).toEqual({ ok: true, value: { square: 9 } });
  });

  it('keeps the calling thread free while a worker is busy', async () => {
    const pool = squarePool();
    await pool.run({ n: 1 });
    const busy = pool.run({ n: 2, spinMs: 400 });
    const t0 = Date.now();
    await new Promise((r) => setTimeout(r, 20));
    // A 20 ms timer fires on time although the worker spins for 400 ms.
    expect(Date.now() - t0).toBeLessThan(200);
    expect(await busy).toEqual({ ok: true, value: { square: 4 } });
  });

  it('stops a task that runs over its time limit, and the next task runs', async () => {
    const pool = squarePool({ taskTimeoutMs: 500 });
    await pool.run({ n: 1 });
    const t0 = Date.now();
    const result = await pool.run({ n: 2, spinMs: Number.POSITIVE_INFINITY });
    expect(result).toMatchObject({ ok: false, failure: { kind: 'timeout', limitMs: 500 } });
    expect(Date.now() - t0).toBeLessThan(5000);
    // The replacement worker takes longer than 0.5 s to load under tsx: the limit counts the task alone.
    expect(await pool.run({ n: 4 })).toEqual({ ok: true, value: { square: 16 } });
  });

  it('fails the task of a worker that ends in the middle of it, and replaces the worker', async () => {
    const pool = squarePool();
    const result = await pool.run({ n: 2, exit: true });
    expect(result).toMatchObject({ ok: false, failure: { kind: 'crashed' } });
    if (!result.ok) expect(result.failure.message).toContain('worker exited with code: 3');
    expect(await pool.run({ n: 5 })).toEqual({ ok: true, value: { square: 25 } });
  });

  it('fails the task of a worker that reaches its heap limit, and replaces the worker', async () => {
    const pool = squarePool({ heapMb: 64 });
    const result = await pool.run({ n: 2, hog: true });
    expect(result).toMatchObject({ ok: false, failure: { kind: 'crashed' } });
    if (!result.ok) expect(result.failure.message).toMatch(/memory/i);
    expect(await pool.run({ n: 6 })).toEqual({ ok: true, value: { square: 36 } });
  });

  it('answers busy with a retry-after when no worker frees up within the wait', async () => {
    const pool = squarePool({ waitMs: 200 });
    await pool.run({ n: 1 });
    const long = pool.run({ n: 2, spinMs: 1500 });
    const second = await pool.run({ n: 3 });
    expect(second).toMatchObject({ ok: false, failure: { kind: 'busy', retryAfterS: 1 } });
    expect(await long).toEqual({ ok: true, value: { square: 4 } });
  });

  it('reports a worker that cannot load as unavailable, with its error, and does not restart it in a loop', async () => {
    const log = join(tempDir('nightjar-pool-'), 'starts.log');
    process.env['NIGHTJAR_TEST_START_LOG'] = log;
    try {
      const failures: string[] = [];
      const pool = createTaskPool<unknown, unknown>({
        name: 'test',
        script: broken,
        threads: 1,
        taskTimeoutMs: 10_000,
        heapMb: 128,
        retryStartAfterMs: 60_000,
        onStartFailure: (m) => failures.push(m),
      });
      pools.push(pool);
      const first = await pool.run({});
      expect(first.ok).toBe(false);
      if (!first.ok) expect(first.failure.message).toContain('this worker cannot load');
      // Within the retry interval, tasks are answered at once without another start.
      await new Promise((r) => setTimeout(r, 1500));
      const later = await pool.run({});
      expect(later).toMatchObject({ ok: false, failure: { kind: 'unavailable' } });
      if (!later.ok) expect(later.failure.message).toContain('this worker cannot load');
      expect(pool.health().startFailure).toContain('this worker cannot load');
      const starts = existsSync(log) ? readFileSync(log, 'utf8').trim().split('\n').length : 0;
      expect(starts).toBeGreaterThanOrEqual(1);
      expect(starts).toBeLessThanOrEqual(2);
    } finally {
      delete process.env['NIGHTJAR_TEST_START_LOG'];
    }
  });

  it('stops within its grace whatever the workers do, failing what still runs', async () => {
    const pool = squarePool();
    await pool.run({ n: 1 });
    const stuck = pool.run({ n: 2, spinMs: Number.POSITIVE_INFINITY });
    await new Promise((r) => setTimeout(r, 100));
    const t0 = Date.now();
    await pool.close(300);
    expect(Date.now() - t0).toBeLessThan(3000);
    expect(await stuck).toMatchObject({ ok: false, failure: { kind: 'unavailable' } });
    expect(await pool.run({ n: 3 })).toMatchObject({ ok: false, failure: { kind: 'unavailable' } });
  });
});
