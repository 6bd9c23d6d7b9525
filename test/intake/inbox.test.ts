import { existsSync, readdirSync, readFileSync, utimesSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { DEMO_NOTICES_DIR } from '../../src/config/load.js';
import { createIntake } from '../../src/intake/ingest.js';
import { processInbox, seedInbox } from '../../src/intake/inbox.js';
import { exampleNotice, fixedClock, memoryStore, tempDir } from '../helpers.js';

const NOW = new Date('2027-03-04T06:00:00Z');

function setup() {
  const clock = fixedClock(NOW.toISOString());
  const store = memoryStore(clock);
  const intake = createIntake({ notices: store.notices, clock, futureToleranceMin: 5 });
  const inbox = tempDir('nightjar-inbox-');
  return { store, intake, inbox };
}

/** Writes a file whose modification time is `ageS` seconds before NOW. */
function drop(inbox: string, name: string, text: string, ageS = 60): void {
  writeFileSync(join(inbox, name), text);
  const t = new Date(NOW.getTime() - ageS * 1000);
  utimesSync(join(inbox, name), t, t);
}

const allFiles = (dir: string): string[] =>
  readdirSync(dir, { recursive: true, withFileTypes: true })
    .filter((d) => d.isFile() && !d.name.startsWith('.'))
    .map((d) => d.name);

describe('inbox folder', () => {
  it('moves a good file to processed/ after storing its notice', () => {
    const { store, intake, inbox } = setup();
    drop(inbox, 'good.json', JSON.stringify(exampleNotice()));
    const [outcome] = processInbox(intake, inbox, NOW, 3000, store.sources);
    expect(outcome?.movedTo).toMatch(/^processed\/.*_good\.json$/);
    expect(readdirSync(join(inbox, 'processed'))).toHaveLength(1);
    expect(store.notices.counts().notices).toBe(1);
  });

  it('moves a malformed file to rejected/ with its reasons beside it', () => {
    const { store, intake, inbox } = setup();
    drop(inbox, 'bad.json', JSON.stringify(exampleNotice({ observer: { lat: 99, lon: 0, height: 0 } })));
    processInbox(intake, inbox, NOW, 3000, store.sources);
    const files = readdirSync(join(inbox, 'rejected')).sort();
    expect(files).toHaveLength(2);
    const reasonsFile = files.find((f) => f.endsWith('.reasons.json'))!;
    const reasons = JSON.parse(readFileSync(join(inbox, 'rejected', reasonsFile), 'utf8')) as {
      results: { reasons: { path: string }[] }[];
    };
    expect(reasons.results[0]!.reasons[0]!.path).toBe('observer.lat');
  });

  it('leaves a file that is still being written until it has settled', () => {
    const { store, intake, inbox } = setup();
    const text = JSON.stringify(exampleNotice());
    drop(inbox, 'growing.json', text.slice(0, 50), 1);
    expect(processInbox(intake, inbox, NOW, 3000, store.sources)).toEqual([]);
    expect(existsSync(join(inbox, 'growing.json'))).toBe(true);
    drop(inbox, 'growing.json', text, 10);
    expect(processInbox(intake, inbox, NOW, 3000, store.sources)[0]?.movedTo).toMatch(/^processed\//);
  });

  it('files a half-written file that never completed under rejected/, not lost', () => {
    const { store, intake, inbox } = setup();
    drop(inbox, 'half.json', JSON.stringify(exampleNotice()).slice(0, 120), 600);
    processInbox(intake, inbox, NOW, 3000, store.sources);
    expect(readdirSync(join(inbox, 'rejected')).some((f) => f.endsWith('_half.json'))).toBe(true);
    expect(store.notices.counts().rejections).toBe(1);
  });

  it('ignores temporary files that are not yet renamed into place', () => {
    const { store, intake, inbox } = setup();
    drop(inbox, 'incoming.json.part', JSON.stringify(exampleNotice()));
    drop(inbox, '.hidden.json', JSON.stringify(exampleNotice()));
    expect(processInbox(intake, inbox, NOW, 3000, store.sources)).toEqual([]);
  });

  it('never loses a file: every dropped file ends in processed/ or rejected/', () => {
    const { store, intake, inbox } = setup();
    const names = ['a.json', 'b.ndjson', 'c.json', 'd.json'];
    drop(inbox, 'a.json', JSON.stringify(exampleNotice()));
    drop(inbox, 'b.ndjson', `${JSON.stringify(exampleNotice({ noticeId: 'n2' }))}\ngarbage\n`);
    drop(inbox, 'c.json', '');
    drop(inbox, 'd.json', JSON.stringify(exampleNotice()));
    processInbox(intake, inbox, NOW, 3000, store.sources);
    const moved = allFiles(inbox).filter((f) => !f.endsWith('.reasons.json'));
    expect(moved).toHaveLength(names.length);
    for (const n of names) expect(moved.some((m) => m.endsWith(`_${n}`))).toBe(true);
    expect(readdirSync(inbox).filter((f) => f.endsWith('.json') || f.endsWith('.ndjson'))).toEqual([]);
  });

  it('seeds the demo notices once', () => {
    const inbox = tempDir('nightjar-inbox-');
    const first = seedInbox(inbox, DEMO_NOTICES_DIR);
    expect(first.length).toBeGreaterThan(0);
    expect(seedInbox(inbox, DEMO_NOTICES_DIR)).toEqual([]);
  });

  it('accepts every demo notice', () => {
    const { store, intake, inbox } = setup();
    seedInbox(inbox, DEMO_NOTICES_DIR);
    const outcomes = processInbox(intake, inbox, NOW, 0, store.sources);
    expect(outcomes.flatMap((o) => o.results).filter((r) => r.status === 'rejected')).toEqual([]);
    expect(store.notices.counts().notices).toBeGreaterThanOrEqual(4);
  });
});
