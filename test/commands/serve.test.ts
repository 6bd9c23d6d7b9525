import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync, readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { PROJECT_ROOT } from '../../src/config/load.js';
import { openDatabase } from '../../src/store/database.js';
import { demoConfigRaw, tempDir } from '../helpers.js';

interface Child {
  proc: ChildProcess;
  logs: string[];
  url: Promise<string>;
  exited: Promise<number | null>;
}

let child: Child | null = null;
afterEach(() => {
  if (child && child.proc.exitCode === null) child.proc.kill('SIGKILL');
  child = null;
});

function startServe(configPath: string): Child {
  const proc = spawn(process.execPath, ['--import', 'tsx', join(PROJECT_ROOT, 'src', 'cli.ts'), 'serve'], {
    cwd: PROJECT_ROOT,
    env: { ...process.env, NIGHTJAR_CONFIG: configPath },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  const logs: string[] = [];
  const url = new Promise<string>((resolve, reject) => {
    let buffer = '';
    proc.stdout!.on('data', (chunk: Buffer) => {
      buffer += chunk.toString();
      let nl: number;
      while ((nl = buffer.indexOf('\n')) >= 0) {
        const line = buffer.slice(0, nl);
        buffer = buffer.slice(nl + 1);
        logs.push(line);
        try {
          const entry = JSON.parse(line) as { msg?: string; url?: string };
          if (entry.msg === 'nightjar listening' && entry.url) resolve(entry.url);
        } catch {
          /* not a log line */
        }
      }
    });
    proc.stderr!.on('data', (chunk: Buffer) => logs.push(chunk.toString()));
    proc.on('exit', () => reject(new Error(`serve exited early:\n${logs.join('\n')}`)));
  });
  const exited = new Promise<number | null>((resolve) => proc.on('close', (code) => resolve(code)));
  return { proc, logs, url, exited };
}

async function until<T>(what: string, probe: () => Promise<T | null> | T | null, timeoutMs = 45_000): Promise<T> {
  const end = Date.now() + timeoutMs;
  for (;;) {
    const v = await probe();
    if (v !== null) return v;
    if (Date.now() > end) throw new Error(`timed out waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 200));
  }
}

function writeConfig(dir: string): { configPath: string; inbox: string; db: string } {
  const raw = demoConfigRaw();
  const service = raw['service'] as Record<string, unknown>;
  const inbox = join(dir, 'inbox');
  const db = join(dir, 'nightjar.sqlite');
  service['port'] = 0;
  service['databasePath'] = db;
  service['inbox'] = { path: inbox, settleMs: 300, seedDemo: true, schedule: '* * * * * *' };
  const configPath = join(dir, 'config.json');
  writeFileSync(configPath, JSON.stringify(raw));
  return { configPath, inbox, db };
}

describe('nightjar serve', () => {
  it('stores the demo notices, files a malformed drop under rejected/, and stops cleanly on SIGTERM', async () => {
    const dir = tempDir('nightjar-serve-');
    const { configPath, inbox, db } = writeConfig(dir);
    child = startServe(configPath);
    const url = await child.url;

    expect((await (await fetch(`${url}/healthz`)).json()) as object).toMatchObject({ status: 'ok' });
    const notices = await until('the demo notices', async () => {
      const body = (await (await fetch(`${url}/v1/notices?limit=100`)).json()) as { items: unknown[] };
      return body.items.length >= 6 ? body.items : null;
    });
    expect(notices.length).toBeGreaterThanOrEqual(6);

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
