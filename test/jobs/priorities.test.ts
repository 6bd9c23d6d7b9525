import { describe, expect, it } from 'vitest';
import { assessInThread, createAssessmentRunner, type AssessInput, type AssessOutput } from '../../src/jobs/assessment-runner.js';
import { createIntake } from '../../src/intake/ingest.js';
import { demoConfig, exampleNotice, memoryStore } from '../helpers.js';

const T0 = Date.parse('2027-03-04T06:00:00Z');

/** A plan with no request whose usable time begins in three hours (a routine replan). */
const routine = (): AssessOutput => ({
  summary: { note: 'fake' },
  retireReason: null,
  requests: [],
  usable: { from: new Date(T0 + 3 * 3_600_000).toISOString(), until: null },
});

function notice(objectId: string, minutesAfterT0: number) {
  const t = (m: number) => new Date(T0 - 90 * 60_000 + (minutesAfterT0 + m) * 60_000).toISOString();
  return exampleNotice({
    noticeId: `n-${objectId}`,
    objectId,
    issuedAt: t(30),
    observations: [
      { t: t(0), ra: 151.2, dec: -12.3, sigma: 0.5, mag: 19.4, band: 'V' },
      { t: t(20), ra: 151.21, dec: -12.295, sigma: 0.5, mag: 19.5, band: 'V' },
    ],
  });
}

describe('work order in the runner', () => {
  it('assesses a fresh notice that arrives during a replan before the replans still waiting', async () => {
    const now = { t: T0 };
    const clock = () => new Date(now.t);
    const store = memoryStore(clock);
    const intake = createIntake({ notices: store.notices, clock, futureToleranceMin: 5 });
    const order: string[] = [];
    let onFirst: (() => void) | null = null;
    const assessor = async (input: AssessInput): Promise<AssessOutput> => {
      order.push(input.objectId);
      const hook = onFirst;
      onFirst = null;
      hook?.();
      return routine();
    };
    const runner = createAssessmentRunner({ config: demoConfig(), store, clock, assessor: assessInThread(assessor), concurrency: 1 });
    const active = ['ZX27R01', 'ZX27R02', 'ZX27R03', 'ZX27R04', 'ZX27R05', 'ZX27R06'];
    active.forEach((id, k) => intake.ingestJson(JSON.stringify(notice(id, k)), 'test'));
    await runner.drain();
    order.length = 0;

    now.t += 10 * 60_000;
    expect(runner.enqueueActive()).toBe(active.length);
    // A queue of routine replans, all enqueued before the notice.
    const queued = store.work.classFigures(clock());
    expect(queued.routine.waiting).toBe(active.length);
    expect(queued.urgent.waiting + queued['new-data'].waiting).toBe(0);
    // The notice arrives while the first replan runs.
    let fresh: { enqueuedAt: string; priorityClass: string } | null = null;
    onFirst = () => {
      now.t += 1000;
      intake.ingestJson(JSON.stringify(notice('ZX27F01', 11)), 'test');
      fresh = store.work.get('ZX27F01');
    };
    await runner.drain();
    // It came last (first in, first out would assess it last) and went in the first class.
    expect(fresh).toMatchObject({ priorityClass: 'new-data' });
    expect(active.every((id) => store.work.get(id)!.enqueuedAt < fresh!.enqueuedAt)).toBe(true);
    expect(order).toHaveLength(active.length + 1);
    expect(order[1]).toBe('ZX27F01');
    expect(order.slice(2).every((id) => id.startsWith('ZX27R'))).toBe(true);
  });
});
