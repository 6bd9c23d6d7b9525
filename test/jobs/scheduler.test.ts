import { describe, expect, it } from 'vitest';
import { createJobRunner } from '../../src/jobs/scheduler.js';

describe('job runner', () => {
  it('never runs the same job twice at once', async () => {
    let running = 0;
    let most = 0;
    let release: () => void = () => {};
    const runner = createJobRunner(
      [
        {
          name: 'slow',
          schedule: '0 0 1 1 *',
          run: async () => {
            running += 1;
            most = Math.max(most, running);
            await new Promise<void>((r) => (release = r));
            running -= 1;
          },
        },
      ],
      () => {},
    );
    const a = runner.runNow('slow');
    const b = runner.runNow('slow');
    while (running === 0) await new Promise((r) => setTimeout(r, 1));
    release();
    await Promise.all([a, b]);
    expect(most).toBe(1);
  });

  it('waits for a running job when stopping', async () => {
    let finished = false;
    const runner = createJobRunner(
      [{ name: 'work', schedule: '0 0 1 1 *', run: async () => { await new Promise((r) => setTimeout(r, 50)); finished = true; } }],
      () => {},
    );
    runner.start();
    void runner.runNow('work');
    await runner.stop();
    expect(finished).toBe(true);
  });

  it('reports a failing job and keeps going', async () => {
    const errors: string[] = [];
    const runner = createJobRunner([{ name: 'bad', schedule: '0 0 1 1 *', run: () => { throw new Error('boom'); } }], (job, err) => errors.push(`${job}: ${(err as Error).message}`));
    await runner.runNow('bad');
    await runner.runNow('bad');
    expect(errors).toEqual(['bad: boom', 'bad: boom']);
  });

  it('tells a running job to stop taking work when the runner stops, and starts no job after', async () => {
    const handled: number[] = [];
    let started = false;
    const runner = createJobRunner(
      [
        {
          name: 'list',
          schedule: '0 0 1 1 *',
          run: async (stopping) => {
            started = true;
            for (let k = 0; k < 1000 && !stopping?.aborted; k++) {
              handled.push(k);
              await new Promise((r) => setTimeout(r, 5));
            }
          },
        },
      ],
      () => {},
    );
    const run = runner.runNow('list');
    while (!started) await new Promise((r) => setTimeout(r, 1));
    const t0 = Date.now();
    await runner.stop();
    await run;
    expect(Date.now() - t0).toBeLessThan(1000);
    expect(handled.length).toBeLessThan(200);
    const after = handled.length;
    await runner.runNow('list');
    expect(handled.length).toBe(after);
  });
});
