import { existsSync, readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { openDatabase } from '../../src/store/database.js';
import { demoConfigRaw, tempDir } from '../helpers.js';
import { startServe, until, writeServiceConfig, type ServiceProcess } from '../service-process.js';

let child: ServiceProcess | null = null;
afterEach(() => {
  if (child && child.proc.exitCode === null) child.proc.kill('SIGKILL');
  child = null;
});

describe('nightjar serve', () => {
  it('stores the demo notices, files a malformed drop under rejected/, and stops cleanly on SIGTERM', async () => {
    const dir = tempDir('nightjar-serve-');
    const { configPath, inbox, db } = writeServiceConfig(dir, (raw) => {
      raw['demo'] = { simulate: false, dripMinutes: 0 };
    });
    child = startServe(configPath);
    const url = await child.url;

    expect((await (await fetch(`${url}/healthz`)).json()) as object).toMatchObject({ status: 'ok' });
    // The running service reports its process too: event-loop lag, heap, handles.
    const metrics = await (await fetch(`${url}/metrics`)).text();
    expect(metrics).toMatch(/^nodejs_eventloop_lag_seconds \d/m);
    expect(metrics).toMatch(/^nodejs_heap_size_used_bytes \d/m);
    expect(metrics).toMatch(/^nodejs_active_handles_total \d/m);
    const notices = await until('the demo notices', async () => {
      const body = (await (await fetch(`${url}/v1/notices?limit=100`)).json()) as { items: unknown[] };
      return body.items.length >= 5 ? body.items : null;
    });
    expect(notices.length).toBeGreaterThanOrEqual(5);

    writeFileSync(join(inbox, 'broken.json.part'), '{"format": "nightjar.notice.v1", "noticeId": ');
    const { renameSync } = await import('node:fs');
    renameSync(join(inbox, 'broken.json.part'), join(inbox, 'broken.json'));
    const rejected = await until('the malformed file in rejected/', () => {
      const files = existsSync(join(inbox, 'rejected')) ? readdirSync(join(inbox, 'rejected')) : [];
      return files.some((f) => f.endsWith('_broken.json.reasons.json')) ? files : null;
    });
    expect(rejected.some((f) => f.endsWith('_broken.json'))).toBe(true);

    child.proc.kill('SIGTERM');
    expect(await child.exited).toBe(0);
    expect(child.logs.some((l) => l.includes('"nightjar stopped"'))).toBe(true);

    // Everything it acknowledged is on disk: reopen and count.
    const reopened = openDatabase(db);
    const n = (reopened.prepare('SELECT count(*) AS n FROM notices').get() as { n: number }).n;
    const r = (reopened.prepare('SELECT count(*) AS n FROM rejections').get() as { n: number }).n;
    reopened.close();
    expect(n).toBe(notices.length);
    expect(r).toBe(1);
  });

  it('refuses to start with a bad configuration and lists the problem', async () => {
    const dir = tempDir('nightjar-serve-');
    const raw = demoConfigRaw();
    (raw['sites'] as { limits: { minAltitudeDeg: number } }[])[0]!.limits.minAltitudeDeg = -1;
    writeFileSync(join(dir, 'bad.json'), JSON.stringify(raw));
    child = startServe(join(dir, 'bad.json'));
    child.url.catch(() => {});
    expect(await child.exited).toBe(1);
    expect(child.logs.join('')).toContain('sites[0].limits.minAltitudeDeg: expected a number >= 0');
  });
});
