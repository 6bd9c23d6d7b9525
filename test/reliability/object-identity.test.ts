import { cpSync, mkdirSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { MIGRATIONS_DIR } from '../../src/config/load.js';
import { openDatabase } from '../../src/store/database.js';
import { createStore } from '../../src/store/index.js';
import { migrate } from '../../src/store/migrations.js';
import { exampleNotice, memoryIntake, tempDir } from '../helpers.js';

const NOW = '2027-03-04T06:00:00Z';
const OTHER = 'Second Survey (invented)';

const setup = () => memoryIntake(NOW);

/** A second sender's positions of another object, at other times and places. */
const otherObservations = [
  { t: '2027-03-04T03:00:00Z', ra: 20.5, dec: 30.1, sigma: 0.4 },
  { t: '2027-03-04T03:30:00Z', ra: 20.52, dec: 30.11, sigma: 0.4 },
];

describe('object identity: a sender and a designation', () => {
  it('keeps another sender\'s object of the same designation apart, under an id of its own', () => {
    const { store, send } = setup();
    expect(send(exampleNotice())).toMatchObject({ status: 'accepted', objectId: 'ZX27A01' });
    expect(send(exampleNotice({ sender: OTHER, noticeId: 'other-1', observations: otherObservations }))).toMatchObject({ status: 'accepted', objectId: 'ZX27A01~2' });
    expect(store.objects.observations('ZX27A01').map((o) => o.raDeg)).toEqual([151.23456, 151.24456]);
    expect(store.objects.observations('ZX27A01~2').map((o) => o.raDeg)).toEqual([20.5, 20.52]);
    expect(store.objects.getObject('ZX27A01~2')).toMatchObject({ sender: OTHER, designation: 'ZX27A01' });
  });

  it('leaves the first sender\'s object alone when another sender retracts the same designation', () => {
    const { store, send } = setup();
    send(exampleNotice());
    const retraction = exampleNotice({ sender: OTHER, noticeId: 'other-r', retracted: true, reason: 'false detection' });
    delete retraction['observations'];
    expect(send(retraction)).toMatchObject({ status: 'accepted', objectId: 'ZX27A01~2', objectState: 'retracted' });
    expect(store.objects.getObject('ZX27A01')?.state).toBe('active');
  });

  it('merges another sender\'s designation only through a notice that links it', () => {
    const { store, send } = setup();
    send(exampleNotice());
    const linked = send(
      exampleNotice({ sender: OTHER, noticeId: 'other-1', objectId: 'S2-0042', linkedTo: { sender: 'Example Survey (invented)', objectId: 'ZX27A01' }, observations: otherObservations }),
    );
    expect(linked).toMatchObject({ status: 'accepted', objectId: 'ZX27A01', observationsAdded: 2 });
    // Later notices under the linked designation need no link.
    expect(send(exampleNotice({ sender: OTHER, noticeId: 'other-2', objectId: 'S2-0042', observations: [
      { t: '2027-03-04T04:50:00Z', ra: 151.25, dec: -12.336, sigma: 0.4 },
      { t: '2027-03-04T05:10:00Z', ra: 151.26, dec: -12.331, sigma: 0.4 },
    ] }))).toMatchObject({ status: 'accepted', objectId: 'ZX27A01' });
    expect(store.objects.observations('ZX27A01')).toHaveLength(6);
    expect(store.objects.names('ZX27A01').map((n) => [n.sender, n.designation, n.link?.designation ?? null])).toEqual([
      ['Example Survey (invented)', 'ZX27A01', null],
      [OTHER, 'S2-0042', 'ZX27A01'],
    ]);
  });

  it('refuses a link to an object nobody sent, naming linkedTo', () => {
    const { store, send } = setup();
    const r = send(exampleNotice({ linkedTo: { sender: OTHER, objectId: 'NOPE1' } }));
    expect(r).toMatchObject({ status: 'rejected', reasons: [{ path: 'linkedTo', message: expect.stringContaining('no object is known as "NOPE1"') }] });
    expect(store.notices.counts()).toMatchObject({ notices: 0, objects: 0, rejections: 1 });
  });

  it('refuses to link a designation that already names another object', () => {
    const { send } = setup();
    send(exampleNotice());
    send(exampleNotice({ sender: OTHER, noticeId: 'other-1', objectId: 'S2-0042', observations: otherObservations }));
    const r = send(exampleNotice({ sender: OTHER, noticeId: 'other-2', objectId: 'S2-0042', linkedTo: { sender: 'Example Survey (invented)', objectId: 'ZX27A01' } }));
    expect(r).toMatchObject({ status: 'rejected', reasons: [{ path: 'linkedTo', message: expect.stringContaining('already names object S2-0042') }] });
  });

  it('gives objects stored before identity was a sender\'s designation their sender and names, keeping past merges', () => {
    const dir = tempDir('nightjar-identity-');
    const old = join(dir, 'migrations');
    mkdirSync(old);
    for (const f of readdirSync(MIGRATIONS_DIR).filter((f) => f < '0003')) cpSync(join(MIGRATIONS_DIR, f), join(old, f));
    const db = openDatabase(join(dir, 'db.sqlite'));
    migrate(db, old);
    const note = db.prepare(`INSERT INTO notices (sender, notice_id, object_id, source, received_at, issued_at, raw, kind, state) VALUES (?, ?, 'ZX27A01', 'test', ?, ?, '{}', 'observations', 'merged')`);
    db.prepare(`INSERT INTO objects (id, state, first_notice_at, last_notice_at) VALUES ('ZX27A01', 'active', ?, ?)`).run(NOW, NOW);
    note.run('First (invented)', 'n1', '2027-03-04T01:00:00Z', NOW);
    note.run('Second (invented)', 'n2', '2027-03-04T02:00:00Z', NOW);
    migrate(db, MIGRATIONS_DIR);
    const store = createStore(db);
    expect(store.objects.getObject('ZX27A01')).toMatchObject({ sender: 'First (invented)', designation: 'ZX27A01' });
    expect(store.objects.objectIdFor('Second (invented)', 'ZX27A01')).toBe('ZX27A01');
    db.close();
  });
});
