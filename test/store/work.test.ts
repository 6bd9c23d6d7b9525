import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { MIGRATIONS_DIR } from '../../src/config/load.js';
import { openStore, type Store } from '../../src/store/index.js';
import type { ReplanPolicy } from '../../src/store/work.js';
import { memoryStore, tempDir } from '../helpers.js';

const T0 = new Date('2027-03-04T06:00:00.000Z');
const at = (minutes: number) => new Date(T0.getTime() + minutes * 60_000);
const POLICY: ReplanPolicy = { opensWithinMs: 3_600_000, endsWithinMs: 7_200_000 };

/** An active object with a stored assessment's usable span (ISO or null). */
function activeObject(store: Store, id: string, usable: { from: string | null; until: string | null } = { from: null, until: null }): void {
  store.db
    .prepare(`INSERT INTO objects (id, state, first_notice_at, last_notice_at) VALUES (?, 'active', ?, ?)`)
    .run(id, T0.toISOString(), T0.toISOString());
  store.objects.recordUsable(id, usable);
}

function claimAll(store: Store, now: Date): string[] {
  const out: string[] = [];
  for (let item = store.work.claimNext(now); item; item = store.work.claimNext(now)) out.push(item.objectId);
  return out;
}

describe('work queue priorities', () => {
  it('hands out new data before routine replans enqueued earlier', () => {
    const store = memoryStore(() => T0);
    for (const id of ['A', 'B', 'C']) activeObject(store, id);
    store.work.enqueueReplans(at(0), POLICY);
    activeObject(store, 'FRESH');
    store.work.enqueueNewData(['FRESH'], at(1));
    expect(claimAll(store, at(2))[0]).toBe('FRESH');
  });

  it('within new data, hands out the item due soonest first', () => {
    const store = memoryStore(() => T0);
    for (const id of ['SLOW', 'FAST']) activeObject(store, id);
    store.work.enqueueNewData(['SLOW'], at(0), at(10));
    store.work.enqueueNewData(['FAST'], at(1), at(2));
    expect(claimAll(store, at(3))).toEqual(['FAST', 'SLOW']);
  });

  it('puts an object whose usable window opens within the hour, or ends within two hours, before routine replans', () => {
    const store = memoryStore(() => T0);
    activeObject(store, 'LATER', { from: at(300).toISOString(), until: null });
    activeObject(store, 'OPENS-SOON', { from: at(40).toISOString(), until: null });
    activeObject(store, 'ENDS-SOON', { from: at(-60).toISOString(), until: at(90).toISOString() });
    activeObject(store, 'OPEN-FOR-HOURS', { from: at(-60).toISOString(), until: null });
    store.work.enqueueReplans(T0, POLICY);
    expect(store.work.get('OPENS-SOON')?.priorityClass).toBe('urgent');
    expect(store.work.get('ENDS-SOON')?.priorityClass).toBe('urgent');
    expect(store.work.get('LATER')?.priorityClass).toBe('routine');
    // Within each class, the earlier of the two times goes first.
    expect(claimAll(store, T0)).toEqual(['ENDS-SOON', 'OPENS-SOON', 'OPEN-FOR-HOURS', 'LATER']);
  });

  it('leaves a waiting new-data item in its class when a replan comes', () => {
    const store = memoryStore(() => T0);
    activeObject(store, 'A');
    store.work.enqueueNewData(['A'], at(0));
    store.work.enqueueReplans(at(5), POLICY);
    expect(store.work.get('A')).toMatchObject({ priorityClass: 'new-data', state: 'waiting', enqueuedAt: at(0).toISOString() });
  });

  it('moves a waiting routine item up when the next replan finds it urgent, keeping its enqueue time', () => {
    const store = memoryStore(() => T0);
    activeObject(store, 'A', { from: at(200).toISOString(), until: null });
    store.work.enqueueReplans(T0, POLICY);
    expect(store.work.get('A')?.priorityClass).toBe('routine');
    store.work.enqueueReplans(at(150), POLICY);
    expect(store.work.get('A')).toMatchObject({ priorityClass: 'urgent', enqueuedAt: T0.toISOString() });
  });

  it('does not touch a running item on a replan, and new data for it make it wait again', () => {
    const store = memoryStore(() => T0);
    activeObject(store, 'A');
    store.work.enqueueReplans(T0, POLICY);
    store.work.claimNext(T0);
    store.work.enqueueReplans(at(1), POLICY);
    expect(store.work.get('A')?.state).toBe('running');
    store.work.enqueueNewData(['A'], at(2));
    expect(store.work.get('A')).toMatchObject({ state: 'waiting', priorityClass: 'new-data' });
    // The assessment that was running finishes: the item stays waiting for the new data.
    store.work.finish('A', at(3));
    expect(store.work.get('A')?.state).toBe('waiting');
  });

  it('keeps the order across a restart of the database', () => {
    const path = join(tempDir(), 'work.sqlite');
    const first = openStore(path, MIGRATIONS_DIR, () => T0);
    for (const id of ['R1', 'R2']) activeObject(first, id);
    first.work.enqueueReplans(T0, POLICY);
    activeObject(first, 'FRESH');
    first.work.enqueueNewData(['FRESH'], at(1));
    first.db.close();
    const again = openStore(path, MIGRATIONS_DIR, () => T0);
    expect(claimAll(again, at(2))).toEqual(['FRESH', 'R1', 'R2']);
    again.db.close();
  });

  it('reports per class the items waiting and running and the age of the oldest waiting one', () => {
    const store = memoryStore(() => T0);
    for (const id of ['A', 'B', 'C']) activeObject(store, id);
    store.work.enqueueReplans(T0, POLICY);
    store.work.enqueueNewData(['A'], at(4));
    store.work.claimNext(at(5)); // A, new data
    expect(store.work.classFigures(at(10))).toEqual({
      'new-data': { waiting: 0, running: 1, oldestAgeS: 0 },
      urgent: { waiting: 0, running: 0, oldestAgeS: 0 },
      routine: { waiting: 2, running: 0, oldestAgeS: 600 },
    });
  });
});
