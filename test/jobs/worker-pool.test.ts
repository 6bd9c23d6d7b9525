import { describe, expect, it } from 'vitest';
import { createWorkerPool, WorkerTaskError } from '../../src/jobs/worker-pool.js';

const script = new URL('./fixtures/square-worker.ts', import.meta.url);

describe('worker pool', () => {
  it('runs tasks in worker threads and returns their results', async () => {
    const pool = createWorkerPool<{ n: number }, { square: number }>(script, 2);
    try {
      const results = await Promise.all([1, 2, 3, 4, 5].map((n) => pool.run({ n })));
      expect(results.map((r) => r.square)).toEqual([1, 4, 9, 16, 25]);
    } finally {
      await pool.close();
    }
  });

  it('passes a failure inside the worker back to the caller with its message', async () => {
    const pool = createWorkerPool<{ n: number }, { square: number }>(script, 1);
    try {
      await expect(pool.run({ n: -1 })).rejects.toThrow(WorkerTaskError);
      await expect(pool.run({ n: -2 })).rejects.toThrow('n must not be negative, got -2');
      expect((await pool.run({ n: 3 })).square).toBe(9);
    } finally {
      await pool.close();
    }
  });

  it('keeps the calling thread free while workers are busy', async () => {
    const pool = createWorkerPool<{ n: number; spinMs: number }, { square: number }>(script, 1);
    try {
      const busy = pool.run({ n: 2, spinMs: 400 });
      const t0 = Date.now();
      await new Promise((r) => setTimeout(r, 20));
      // A 20 ms timer fires on time although the worker spins for 400 ms.
      expect(Date.now() - t0).toBeLessThan(200);
      expect((await busy).square).toBe(4);
    } finally {
      await pool.close();
    }
  });
});
