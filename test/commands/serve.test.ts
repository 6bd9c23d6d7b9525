import { existsSync, readdirSync, writeFileSync } from 'node:fs';
import { createServer } from 'node:net';
import type { AddressInfo } from 'node:net';
import { pathToFileURL } from 'node:url';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { PROJECT_ROOT } from '../../src/config/load.js';
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
    // The reasons file is written first, then the file is moved beside it: wait for both.
    const rejected = await until('the malformed file in rejected/', () => {
      const files = existsSync(join(inbox, 'rejected')) ? readdirSync(join(inbox, 'rejected')) : [];
      return files.some((f) => f.endsWith('_broken.json.reasons.json')) && files.some((f) => f.endsWith('_broken.json')) ? files : null;
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

describe('nightjar serve, stopping on faults', () => {
  const FAULT = join(PROJECT_ROOT, 'test', 'commands', 'fixtures', 'fault-on-signal.mjs');

  it.each([
    ['exception', 'a fault the service did not catch'],
    ['rejection', 'a promise nobody awaited failed'],
  ])('logs an uncaught %s and stops cleanly, with exit code 1', async (fault, message) => {
    const dir = tempDir('nightjar-serve-');
    const { configPath } = writeServiceConfig(dir, (raw) => {
      raw['demo'] = { simulate: false, dripMinutes: 0 };
    });
    child = startServe(configPath, { preload: [pathToFileURL(FAULT).href], env: { NIGHTJAR_TEST_FAULT: fault } });
    await child.url;
    child.proc.kill('SIGWINCH');
    expect(await child.exited).toBe(1);
    const entries = child.logs.flatMap((l) => {
      try {
        return [JSON.parse(l) as { msg?: string; err?: { message?: string } }];
      } catch {
        return [];
      }
    });
    expect(entries.find((e) => e.msg === 'uncaught error: stopping the service')?.err?.message).toBe(message);
    expect(entries.some((e) => e.msg === 'nightjar stopped')).toBe(true);
  });

  it('says the port is in use and to set NIGHTJAR_PORT, without a stack trace', async () => {
    const busy = createServer();
    await new Promise<void>((resolve) => busy.listen(0, '127.0.0.1', resolve));
    const port = (busy.address() as AddressInfo).port;
    try {
      const dir = tempDir('nightjar-serve-');
      const { configPath } = writeServiceConfig(dir, (raw) => {
        raw['demo'] = { simulate: false, dripMinutes: 0 };
      });
      child = startServe(configPath, { env: { NIGHTJAR_PORT: String(port) } });
      child.url.catch(() => {});
      expect(await child.exited).toBe(1);
      const text = child.logs.join('\n');
      expect(text).toContain(`nightjar serve: cannot listen on 127.0.0.1:${port}: the port is in use (another nightjar, or another program); stop that, or set NIGHTJAR_PORT`);
      expect(text).not.toMatch(/\n\s+at /);
    } finally {
      busy.close();
    }
  });
});
