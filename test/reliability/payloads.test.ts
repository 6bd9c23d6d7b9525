import { existsSync, readdirSync, readFileSync, utimesSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { buildApp } from '../../src/api/app.js';
import { MIGRATIONS_DIR } from '../../src/config/load.js';
import { createIntake, type Intake } from '../../src/intake/ingest.js';
import { MAX_FILE_ATTEMPTS, processInbox } from '../../src/intake/inbox.js';
import { intakeJobs } from '../../src/jobs/intake-jobs.js';
import { buildTestApp, DEMO_TOKENS, demoConfig, exampleNotice, fixedClock, memoryStore, tempDir } from '../helpers.js';

const NOW = new Date('2027-03-04T06:00:00Z');
const feeder = { authorization: `Bearer ${DEMO_TOKENS.feeder}`, 'content-type': 'application/json' };
const deepArray = `${'['.repeat(20_000)}${']'.repeat(20_000)}`;
const closers: (() => Promise<unknown>)[] = [];
afterEach(async () => {
  for (const c of closers.splice(0)) await c();
});

function drop(inbox: string, name: string, text: string, ageS = 60): void {
  writeFileSync(join(inbox, name), text);
  const t = new Date(NOW.getTime() - ageS * 1000);
  utimesSync(join(inbox, name), t, t);
}

/** An intake whose reading of files named like `poison` throws (a fault in reading that file, whatever its cause). */
function failingFor(intake: Intake, poison: string): Intake {
  return {
    ...intake,
    ingestJson: (payload, source) => {
      if (source.includes(poison)) throw new RangeError('Maximum call stack size exceeded');
      return intake.ingestJson(payload, source);
    },
  };
}

describe('payloads that cannot be split', () => {
  it('answers an array nested 20 000 levels deep with 422 and keeps it with the reason', async () => {
    const { app } = await buildTestApp({ clock: fixedClock(NOW.toISOString()) });
    closers.push(() => app.close());
    const res = await app.inject({ method: 'POST', url: '/v1/notices', headers: feeder, payload: deepArray });
    expect(res.statusCode).toBe(422);
    expect(res.json().results[0].reasons[0]).toEqual({ path: '(body)', message: 'JSON nests deeper than 16 levels (at character 16); a notice needs 4' });
    const kept = (await app.inject({ url: `/v1/rejections/${res.json().results[0].rejectionId}` })).json();
    expect(kept.raw).toBe(deepArray);
  });

  it('files the same payload from the inbox under rejected/ with its reason, and reads the files behind it', () => {
    const clock = fixedClock(NOW.toISOString());
    const store = memoryStore(clock);
    const intake = createIntake({ notices: store.notices, clock, futureToleranceMin: 5 });
    const inbox = tempDir('nightjar-deep-');
    drop(inbox, 'a-deep.json', deepArray, 120);
    drop(inbox, 'b-good.json', JSON.stringify(exampleNotice()), 60);
    const outcomes = processInbox(intake, inbox, NOW, 3000, store.sources);
    expect(outcomes.map((o) => o.movedTo?.split('/')[0])).toEqual(['rejected', 'processed']);
    expect(store.notices.counts()).toMatchObject({ notices: 1, rejections: 1 });
  });
});

describe('an inbox file whose reading fails', () => {
  it(`is tried again, then moved to rejected/ with its error after ${MAX_FILE_ATTEMPTS} failures, while the files behind it are read`, () => {
    const clock = fixedClock(NOW.toISOString());
    const store = memoryStore(clock);
    const intake = failingFor(createIntake({ notices: store.notices, clock, futureToleranceMin: 5 }), 'poison');
    const inbox = tempDir('nightjar-poison-');
    drop(inbox, 'a-poison.json', JSON.stringify(exampleNotice()), 120);
    drop(inbox, 'b-good.json', JSON.stringify(exampleNotice({ noticeId: 'b', objectId: 'ZX27B01' })), 60);
    const first = processInbox(intake, inbox, NOW, 3000, store.sources);
    expect(first.map((o) => [o.file, o.movedTo?.split('/')[0] ?? null, o.failure?.attempts ?? null])).toEqual([
      ['a-poison.json', null, 1],
      ['b-good.json', 'processed', null],
    ]);
    expect(existsSync(join(inbox, 'a-poison.json'))).toBe(true);
    const second = processInbox(intake, inbox, NOW, 3000, store.sources);
    expect(second).toHaveLength(1);
    expect(second[0]).toMatchObject({ file: 'a-poison.json', failure: { attempts: 2, error: 'Maximum call stack size exceeded' } });
    expect(second[0]!.movedTo).toMatch(/^rejected\/.*a-poison\.json$/);
    const errorFile = readdirSync(join(inbox, 'rejected')).find((f) => f.endsWith('.error.json'))!;
    expect(JSON.parse(readFileSync(join(inbox, 'rejected', errorFile), 'utf8'))).toMatchObject({ file: 'a-poison.json', attempts: 2, error: 'Maximum call stack size exceeded' });
    expect(processInbox(intake, inbox, NOW, 3000, store.sources)).toEqual([]);
  });

  it('is moved aside after the service stopped twice while reading it', () => {
    const clock = fixedClock(NOW.toISOString());
    const store = memoryStore(clock);
    const intake = createIntake({ notices: store.notices, clock, futureToleranceMin: 5 });
    const inbox = tempDir('nightjar-crashing-');
    drop(inbox, 'crasher.json', JSON.stringify(exampleNotice()));
    // Two attempts that began and never ended, as a process killed while reading leaves them.
    store.sources.beginInboxAttempt('crasher.json', NOW);
    store.sources.beginInboxAttempt('crasher.json', NOW);
    const [outcome] = processInbox(intake, inbox, NOW, 3000, store.sources);
    expect(outcome).toMatchObject({ file: 'crasher.json', failure: { attempts: 2, error: 'the service stopped while reading it, 2 times' } });
    expect(outcome!.movedTo).toMatch(/^rejected\//);
  });

  it('shows in /readyz and the metrics until it is moved', async () => {
    const clock = () => NOW;
    const inboxPath = tempDir('nightjar-ready-');
    const config = demoConfig((raw) => {
      (raw['service'] as Record<string, unknown>)['inbox'] = { path: inboxPath, settleMs: 0, seedDemo: false };
    });
    const store = memoryStore(clock);
    const intake = createIntake({ notices: store.notices, clock, futureToleranceMin: 5 });
    const app = await buildApp({ config, store, clock, intake, migrationsDir: MIGRATIONS_DIR });
    closers.push(() => app.close());
    const scan = intakeJobs({ config, store, intake: failingFor(intake, 'poison'), clock, log: { info: () => {}, warn: () => {} } }).find((j) => j.name === 'scan-inbox')!;
    drop(inboxPath, 'poison.json', JSON.stringify(exampleNotice()));
    await scan.run();
    const ready = (await app.inject({ url: '/readyz' })).json();
    expect(ready.inbox.failingFiles).toEqual([{ file: 'poison.json', attempts: 1, lastError: 'Maximum call stack size exceeded', at: NOW.toISOString() }]);
    expect(ready.sources.find((s: { source: string }) => s.source === 'inbox')).toMatchObject({ consecutiveFailures: 1 });
    expect(ready.problems).toContain('inbox file poison.json failed 1 time(s): Maximum call stack size exceeded');
    expect((await app.inject({ url: '/metrics' })).body).toContain('nightjar_inbox_failing_files 1');
    await scan.run();
    const after = (await app.inject({ url: '/readyz' })).json();
    expect(after.inbox.failingFiles).toEqual([]);
  });
});
