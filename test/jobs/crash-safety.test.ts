import { mkdirSync, readdirSync, renameSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { openDatabase } from '../../src/store/database.js';
import { simulateNight } from '../../src/planning/simulate.js';
import { DEMO_TOKENS, tempDir } from '../helpers.js';
import { startServe, until, writeServiceConfig, type ServiceProcess } from '../service-process.js';

let child: ServiceProcess | null = null;
afterEach(() => {
  if (child && child.proc.exitCode === null) child.proc.kill('SIGKILL');
  child = null;
});

/** A deterministic stream of pauses in ms (so a failure can be replayed). */
function pauses(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return 300 + (s % 2200);
  };
}

/** Leases the best queued request at the first demo site, if there is one; returns its id. */
async function leaseOne(url: string): Promise<string | null> {
  const headers = { authorization: `Bearer ${DEMO_TOKENS.scheduler}`, 'content-type': 'application/json' };
  for (const site of ['lantern-ridge', 'kestrel-hollow']) {
    const queue = (await (await fetch(`${url}/v1/queue?site=${site}`, { headers })).json()) as { items: { id: string }[] };
    const first = queue.items[0];
    if (!first) continue;
    const res = await fetch(`${url}/v1/requests/${first.id}/lease`, { method: 'POST', headers, body: JSON.stringify({ holder: 'crash-test', seconds: 3600 }) });
    if (res.status === 200) return first.id;
  }
  return null;
}

describe('crash safety', () => {
  it('after kill -9 at random moments and a restart, every accepted notice is assessed once and nothing is half-written', async () => {
    const dir = tempDir('nightjar-crash-');
    const { configPath, inbox, db } = writeServiceConfig(dir, (raw) => {
      const service = raw['service'] as Record<string, unknown>;
      service['inbox'] = { path: join(dir, 'inbox'), settleMs: 0, seedDemo: false, schedule: '* * * * * *' };
      service['workers'] = 1;
      raw['demo'] = { simulate: false, dripMinutes: 0 };
      raw['planning'] = { horizonH: 24, members: 150, weights: {} };
    });
    mkdirSync(inbox, { recursive: true });
    const now = new Date();
    const burst = simulateNight({ now, count: 14, seed: 99 }).map((s) => s.notice);
    // Drop the burst into the inbox as a few files, written then renamed into place.
    for (let f = 0; f < 4; f++) {
      const part = burst.filter((_, k) => k % 4 === f);
      writeFileSync(join(inbox, `.burst-${f}.part`), JSON.stringify(part));
    }
    const next = pauses(20271204);
    let leased: string | null = null;
    let kills = 0;
    for (let round = 0; round < 5; round++) {
      if (round < 3) for (let f = round; f < 4 && f <= round + 1; f++) {
        try {
          renameSync(join(inbox, `.burst-${f}.part`), join(inbox, `burst-${f}.json`));
        } catch {
          /* already placed */
        }
      }
      child = startServe(configPath);
      const url = await child.url;
      if (round === 4) break;
      if (round === 2) {
        // Take a lease as soon as something is queued, then kill soon after.
        leased = await until('a queued request to lease', () => leaseOne(url), 60_000);
      }
      await new Promise((r) => setTimeout(r, next()));
      child.proc.kill('SIGKILL');
      await child.exited;
      kills += 1;
    }
    expect(kills).toBe(4);
    // Place anything still held back, then let the last run drain everything.
    for (let f = 0; f < 4; f++) {
      try {
        renameSync(join(inbox, `.burst-${f}.part`), join(inbox, `burst-${f}.json`));
      } catch {
        /* placed */
      }
    }
    const url = await child!.url;
    await until(
      'the work queue to drain',
      async () => {
        const ready = (await (await fetch(`${url}/readyz`)).json()) as { work: { waiting: number; running: number; done: number; failed: number } };
        const inboxLeft = readdirSync(inbox).filter((f) => f.endsWith('.json')).length;
        return inboxLeft === 0 && ready.work.waiting === 0 && ready.work.running === 0 && ready.work.done + ready.work.failed >= burst.length ? ready : null;
      },
      120_000,
    );
    child!.proc.kill('SIGTERM');
    await child!.exited;

    const store = openDatabase(db);
    const one = (sql: string) => (store.prepare(sql).get() as { n: number }).n;
    // Every notice of the burst is stored exactly once, and every object has been assessed.
    expect(one('SELECT count(*) AS n FROM notices')).toBe(burst.length);
    expect(one('SELECT count(DISTINCT object_id) AS n FROM assessments')).toBe(burst.length);
    expect(one("SELECT count(*) AS n FROM work WHERE state <> 'done'")).toBe(0);
    // No request is duplicated: one open request per object, site, kind and night at most.
    expect(one(`SELECT count(*) AS n FROM (SELECT object_id, site_id, kind, night, count(*) AS c FROM requests
      WHERE state IN ('queued', 'leased') GROUP BY object_id, site_id, kind, night HAVING c > 1)`)).toBe(0);
    // No assessment is half-written: it proposed (created or revised) no more requests than its stored summary
    // lists, and every request's current revision was written together with it.
    const rows = store.prepare('SELECT id, summary FROM assessments').all() as { id: number; summary: string }[];
    for (const r of rows) {
      const summary = JSON.parse(r.summary) as { sites: { requests: unknown[] }[] };
      const planned = summary.sites.reduce((n, s) => n + s.requests.length, 0);
      const written = (store.prepare('SELECT count(*) AS n FROM request_revisions WHERE assessment_id = ?').get(r.id) as { n: number }).n;
      expect(written, `assessment ${r.id}`).toBeLessThanOrEqual(planned);
    }
    expect(one(`SELECT count(*) AS n FROM requests r WHERE NOT EXISTS (SELECT 1 FROM request_revisions v
      WHERE v.request_id = r.id AND v.revision = r.revision AND v.assessment_id = r.assessment_id)`)).toBe(0);
    // Every queued request is one its object's latest assessment proposes (same site, kind and window).
    const latest = store.prepare(`SELECT a.object_id AS objectId, a.summary FROM assessments a
      WHERE a.id = (SELECT max(b.id) FROM assessments b WHERE b.object_id = a.object_id)`).all() as { objectId: string; summary: string }[];
    const proposed = new Set(
      latest.flatMap((a) =>
        (JSON.parse(a.summary) as { sites: { siteId: string; requests: { kind: string; windowStart: string; windowEnd: string }[] }[] }).sites.flatMap((s) =>
          s.requests.map((q) => `${a.objectId}|${s.siteId}|${q.kind}|${q.windowStart}|${q.windowEnd}`),
        ),
      ),
    );
    const queued = store.prepare(`SELECT object_id AS objectId, site_id AS siteId, kind, window_start AS windowStart, window_end AS windowEnd FROM requests
      WHERE state = 'queued'`).all() as { objectId: string; siteId: string; kind: string; windowStart: string; windowEnd: string }[];
    for (const q of queued) expect(proposed.has(`${q.objectId}|${q.siteId}|${q.kind}|${q.windowStart}|${q.windowEnd}`), `${q.objectId} ${q.siteId} ${q.kind}`).toBe(true);
    // A lease taken before a kill survives it.
    expect(leased, 'a request was leased before one of the kills').not.toBeNull();
    {
      expect(store.prepare('SELECT state, lease_holder AS holder FROM requests WHERE id = ?').get(leased)).toEqual({ state: 'leased', holder: 'crash-test' });
    }
    store.close();
  }, 180_000); // five service starts and a full drain: beyond the suite's 60 s default on a shared 2-core machine
});
