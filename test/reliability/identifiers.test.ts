import { REPLAN_POLICY } from '../../src/jobs/assessment-runner.js';
import { describe, expect, it } from 'vitest';
import { DESIGNATION_RULE, NOTICE_ID_RULE, SENDER_RULE } from '../../src/intake/identifiers.js';
import { assessInThread, createAssessmentRunner } from '../../src/jobs/assessment-runner.js';
import { buildTestApp, DEMO_TOKENS, exampleNotice, fixedClock } from '../helpers.js';

const NOW = '2027-03-04T06:00:00Z';
const feeder = { authorization: `Bearer ${DEMO_TOKENS.feeder}`, 'content-type': 'application/json' };

/** A notice body with `field` set to the JSON text `jsonValue` (so escapes such as \ud800 reach the parser as sent). */
function withRaw(field: string, jsonValue: string, overrides: Record<string, unknown> = {}): string {
  return JSON.stringify(exampleNotice({ [field]: '@@VALUE@@', ...overrides })).replace('"@@VALUE@@"', jsonValue);
}

describe('identifiers', () => {
  it('refuses a lone surrogate as a designation, naming the field and the rule, and object reads keep answering', async () => {
    const { app, store } = await buildTestApp({ clock: fixedClock(NOW) });
    try {
      const res = await app.inject({ method: 'POST', url: '/v1/notices', headers: feeder, payload: withRaw('objectId', '"\\ud800"') });
      expect(res.statusCode).toBe(422);
      const [reason] = res.json().results[0].reasons as { path: string; message: string }[];
      expect(reason).toEqual({ path: 'objectId', message: `is not well-formed Unicode (a lone surrogate U+D800 at position 0); expected ${DESIGNATION_RULE.rule}` });
      expect(store.notices.counts().objects).toBe(0);
      expect((await app.inject({ url: '/v1/objects' })).statusCode).toBe(200);
      expect((await app.inject({ url: '/v1/rejections' })).statusCode).toBe(200);
    } finally {
      await app.close();
    }
  });

  it.each([
    ['a path', 'objectId', '../../etc/passwd', 'contains ".."', DESIGNATION_RULE],
    ['a zero-width space', 'objectId', 'ZX27\u200bA01', 'contains U+200B at position 4, which is not allowed', DESIGNATION_RULE],
    ['a right-to-left override', 'objectId', 'ZX27\u202eA01', 'contains U+202E at position 4, which is not allowed', DESIGNATION_RULE],
    ['a trailing space', 'objectId', 'ZX27A01 ', 'ends with " "', DESIGNATION_RULE],
    ['dot segments', 'noticeId', 'a/../b', 'contains ".."', NOTICE_ID_RULE],
    ['a direction mark', 'sender', 'Example\u200f Survey', 'contains U+200F at position 7, which is not allowed', SENDER_RULE],
    ['a decomposed accent', 'sender', 'Observatorio Sa\u0303o', 'is not in Unicode normal form C', SENDER_RULE],
  ])('refuses %s in %s, naming the field and the rule', async (_label, field, value, problem, rule) => {
    const { app } = await buildTestApp({ clock: fixedClock(NOW) });
    try {
      const res = await app.inject({ method: 'POST', url: '/v1/notices', headers: feeder, payload: exampleNotice({ [field]: value }) });
      expect(res.statusCode).toBe(422);
      expect(res.json().results[0].reasons).toEqual([{ path: field, message: `${problem}; expected ${rule.rule}` }]);
    } finally {
      await app.close();
    }
  });

  it('accepts designations, notice ids and senders of the stated sets, letters of any script in a sender', async () => {
    const { app } = await buildTestApp({ clock: fixedClock(NOW) });
    try {
      const res = await app.inject({
        method: 'POST',
        url: '/v1/notices',
        headers: feeder,
        payload: exampleNotice({ objectId: '2027 QB1', noticeId: 'survey/2027-03-04/0001', sender: 'Observatório Ondřejova-Kraj (invented)' }),
      });
      expect(res.statusCode).toBe(202);
    } finally {
      await app.close();
    }
  });

  it('fails the work item of an object that is not in the store instead of calling it retracted', async () => {
    const { app, store, config } = await buildTestApp({ clock: fixedClock(NOW) });
    try {
      store.db.pragma('foreign_keys = OFF');
      store.db.prepare(`INSERT INTO work (object_id, state, attempts, enqueued_at, updated_at) VALUES ('ghost', 'waiting', 0, ?, ?)`).run(NOW, NOW);
      store.db.pragma('foreign_keys = ON');
      const warnings: string[] = [];
      const runner = createAssessmentRunner({
        config,
        store,
        clock: fixedClock(NOW),
        concurrency: 1,
        assessor: assessInThread(() => {
          throw new Error('not reached');
        }),
        log: { info: () => {}, warn: (_o, m) => warnings.push(m) },
      });
      await runner.drain();
      expect(store.work.get('ghost')).toMatchObject({ state: 'failed', lastError: 'no object ghost in the store' });
      expect(warnings).toEqual(['work item for an unknown object: failed']);
    } finally {
      await app.close();
    }
  });

  it('replans every active object even when a stored id does not survive a trip through a string', async () => {
    const { app, store } = await buildTestApp({ clock: fixedClock(NOW) });
    try {
      // Bytes that are not UTF-8 (a lone surrogate as an older intake stored it) read back as U+FFFD.
      store.db.exec(`INSERT INTO objects (id, sender, designation, state, first_notice_at, last_notice_at)
        VALUES (CAST(X'EDA080' AS TEXT), 'x', 'x', 'active', '${NOW}', '${NOW}')`);
      expect(store.work.enqueueReplans(new Date(NOW), REPLAN_POLICY)).toBe(1);
      expect(store.work.counts().waiting).toBe(1);
    } finally {
      await app.close();
    }
  });
});
