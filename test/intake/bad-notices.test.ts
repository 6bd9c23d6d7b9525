import { copyFileSync, readdirSync, readFileSync, utimesSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { createIntake } from '../../src/intake/ingest.js';
import { processInbox } from '../../src/intake/inbox.js';
import { MAX_OBSERVATIONS } from '../../src/intake/notice.js';
import { buildTestApp, DEMO_TOKENS, demoConfig, exampleNotice, fixedClock, memoryStore, tempDir } from '../helpers.js';

const CORPUS = join(import.meta.dirname, '..', 'fixtures', 'bad-notices');
const manifest = JSON.parse(readFileSync(join(CORPUS, '_expected.json'), 'utf8')) as {
  cases: Record<string, { path: string; contains: string }>;
};
const files = readdirSync(CORPUS).filter((f) => f.endsWith('.json') && !f.startsWith('_'));
const NOW = '2027-03-04T06:00:00Z';

interface Reason {
  path: string;
  message: string;
}

function matches(reasons: Reason[], expected: { path: string; contains: string }): boolean {
  return reasons.some((r) => r.path === expected.path && r.message.includes(expected.contains));
}

describe('the bad-notice corpus', () => {
  it('holds at least 30 kinds, each with its expected reason', () => {
    expect(files.length).toBeGreaterThanOrEqual(30);
    for (const f of files) expect(manifest.cases[f], f).toBeDefined();
  });

  it('is rejected through the inbox: every file in rejected/ with its reason, nothing lost', () => {
    const clock = fixedClock(NOW);
    const store = memoryStore(clock);
    const intake = createIntake({ notices: store.notices, clock, futureToleranceMin: 5 });
    const inbox = tempDir('nightjar-bad-');
    for (const f of files) {
      copyFileSync(join(CORPUS, f), join(inbox, f));
      utimesSync(join(inbox, f), new Date('2027-03-04T05:00:00Z'), new Date('2027-03-04T05:00:00Z'));
    }
    const outcomes = processInbox(intake, inbox, new Date(NOW), 3000, store.sources);
    expect(outcomes).toHaveLength(files.length);
    for (const o of outcomes) {
      expect(o.movedTo, o.file).toMatch(/^rejected\//);
      const reasons = o.results.flatMap((r) => (r.status === 'rejected' ? r.reasons : []));
      expect(matches(reasons, manifest.cases[o.file]!), `${o.file}: ${JSON.stringify(reasons).slice(0, 300)}`).toBe(true);
    }
    expect(readdirSync(join(inbox, 'rejected')).filter((f) => f.endsWith('.reasons.json'))).toHaveLength(files.length);
    const rejectedItems = outcomes.flatMap((o) => o.results).filter((r) => r.status === 'rejected').length;
    expect(rejectedItems).toBeGreaterThanOrEqual(files.length);
    expect(store.notices.counts()).toMatchObject({ notices: 0, rejections: rejectedItems });
  });

  it('is rejected through POST with 422 and the reason, kept, and the service keeps answering', async () => {
    const { app, store } = await buildTestApp({ clock: fixedClock(NOW) });
    try {
      let rejectedItems = 0;
      for (const f of files) {
        const res = await app.inject({
          method: 'POST',
          url: '/v1/notices',
          headers: { authorization: `Bearer ${DEMO_TOKENS.feeder}`, 'content-type': 'application/json' },
          payload: readFileSync(join(CORPUS, f)),
        });
        expect(res.statusCode, f).toBe(422);
        const body = res.json<{ results: { reasons: Reason[] }[] }>();
        rejectedItems += body.results.length;
        expect(matches(body.results.flatMap((r) => r.reasons), manifest.cases[f]!), f).toBe(true);
      }
      expect(store.notices.counts().rejections).toBe(rejectedItems);
      const ok = await app.inject({
        method: 'POST',
        url: '/v1/notices',
        headers: { authorization: `Bearer ${DEMO_TOKENS.feeder}` },
        payload: exampleNotice(),
      });
      expect(ok.statusCode).toBe(202);
    } finally {
      await app.close();
    }
  });

  it('rejects 100 000 observations through the inbox, naming the limit', () => {
    const clock = fixedClock(NOW);
    const store = memoryStore(clock);
    const intake = createIntake({ notices: store.notices, clock, futureToleranceMin: 5 });
    const inbox = tempDir('nightjar-bad-');
    const one = (exampleNotice()['observations'] as unknown[])[0];
    writeFileSync(join(inbox, 'flood.json'), JSON.stringify(exampleNotice({ observations: Array.from({ length: 100_000 }, () => one) })));
    utimesSync(join(inbox, 'flood.json'), new Date('2027-03-04T05:00:00Z'), new Date('2027-03-04T05:00:00Z'));
    const [outcome] = processInbox(intake, inbox, new Date(NOW), 3000, store.sources);
    expect(outcome?.movedTo).toMatch(/^rejected\//);
    const reasons = outcome!.results.flatMap((r) => (r.status === 'rejected' ? r.reasons : []));
    expect(reasons).toContainEqual({ path: 'observations', message: `expected at most ${MAX_OBSERVATIONS} items` });
  });

  it('answers 100 000 observations over POST with 413 under the default body limit', async () => {
    const { app } = await buildTestApp({ clock: fixedClock(NOW), config: demoConfig() });
    try {
      const one = (exampleNotice()['observations'] as unknown[])[0];
      const res = await app.inject({
        method: 'POST',
        url: '/v1/notices',
        headers: { authorization: `Bearer ${DEMO_TOKENS.feeder}`, 'content-type': 'application/json' },
        payload: JSON.stringify(exampleNotice({ observations: Array.from({ length: 100_000 }, () => one) })),
      });
      expect(res.statusCode).toBe(413);
      expect(res.json().error.code).toBe('payload_too_large');
    } finally {
      await app.close();
    }
  });
});
