import { describe, expect, it } from 'vitest';
import { createQueueAnswers } from '../../src/api/queue-answers.js';

const key = { siteId: 'lantern-ridge', kind: undefined, limit: 50 };
const T = Date.parse('2027-03-04T06:00:00Z');
const min = (m: number) => T + m * 60_000;
const kept = (revision = 'r1') => ({
  revision,
  fromMs: min(0),
  toMs: min(720),
  itemsValidBeforeMs: min(90),
  noNewItemBeforeMs: min(800),
  itemsJson: Buffer.from('{"id":"a"}'),
  nextCursor: null,
  etag: 'W/"a"',
});

describe('kept queue answers', () => {
  it('serve a later question while the revision holds, no item has ended and none has opened', () => {
    const answers = createQueueAnswers();
    answers.keep(key, kept());
    expect(answers.lookup(key, 'r1', min(30), min(750))?.itemsJson.toString()).toBe('{"id":"a"}');
  });

  it('are not used after any database change', () => {
    const answers = createQueueAnswers();
    answers.keep(key, kept());
    expect(answers.lookup(key, 'r2', min(0), min(720))).toBeNull();
  });

  it('are not used once an included window has ended', () => {
    const answers = createQueueAnswers();
    answers.keep(key, kept());
    expect(answers.lookup(key, 'r1', min(90), min(750))).toBeNull();
  });

  it('are not used once the asked interval reaches a window that was outside it', () => {
    const answers = createQueueAnswers();
    answers.keep(key, kept());
    expect(answers.lookup(key, 'r1', min(10), min(800))).toBeNull();
  });

  it('are not used for an earlier or narrower interval than the one they were read for', () => {
    const answers = createQueueAnswers();
    answers.keep(key, kept());
    expect(answers.lookup(key, 'r1', min(-1), min(720))).toBeNull();
    expect(answers.lookup(key, 'r1', min(0), min(700))).toBeNull();
  });

  it('are kept apart by site, kind, limit and page', () => {
    const answers = createQueueAnswers();
    answers.keep(key, kept());
    expect(answers.lookup({ ...key, siteId: 'kestrel-hollow' }, 'r1', min(0), min(720))).toBeNull();
    expect(answers.lookup({ ...key, kind: 'spectrum' }, 'r1', min(0), min(720))).toBeNull();
    expect(answers.lookup({ ...key, limit: 10 }, 'r1', min(0), min(720))).toBeNull();
    expect(answers.lookup({ ...key, cursor: 'next' }, 'r1', min(0), min(720))).toBeNull();
  });

  it('hold at most 64 questions, forgetting the oldest first', () => {
    const answers = createQueueAnswers();
    for (let limit = 1; limit <= 65; limit++) answers.keep({ ...key, limit }, kept());
    expect(answers.lookup({ ...key, limit: 1 }, 'r1', min(0), min(720))).toBeNull();
    expect(answers.lookup({ ...key, limit: 2 }, 'r1', min(0), min(720))).not.toBeNull();
    expect(answers.lookup({ ...key, limit: 65 }, 'r1', min(0), min(720))).not.toBeNull();
  });
});
