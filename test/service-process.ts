import { spawn, type ChildProcess } from 'node:child_process';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { PROJECT_ROOT } from '../src/config/load.js';
import { demoConfigRaw } from './helpers.js';

/** A `nightjar serve` child process with its log lines and listening address. */
export interface ServiceProcess {
  proc: ChildProcess;
  logs: string[];
  url: Promise<string>;
  exited: Promise<number | null>;
}

/** Starts `src/cli.ts serve` under tsx with the given config file; `preload` modules run first in the same process, `env` adds variables. */
export function startServe(configPath: string, options: { preload?: string[]; env?: Record<string, string> } = {}): ServiceProcess {
  const preload = (options.preload ?? []).flatMap((m) => ['--import', m]);
  const proc = spawn(process.execPath, ['--import', 'tsx', ...preload, join(PROJECT_ROOT, 'src', 'cli.ts'), 'serve'], {
    cwd: PROJECT_ROOT,
    env: { ...process.env, NIGHTJAR_CONFIG: configPath, ...options.env },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  const logs: string[] = [];
  const url = new Promise<string>((resolve, reject) => {
    let buffer = '';
    proc.stdout.on('data', (chunk: Buffer) => {
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
    proc.stderr.on('data', (chunk: Buffer) => logs.push(chunk.toString()));
    proc.on('exit', () => reject(new Error(`serve exited early:\n${logs.join('\n')}`)));
  });
  url.catch(() => {});
  const exited = new Promise<number | null>((resolve) => proc.on('close', (code) => resolve(code)));
  return { proc, logs, url, exited };
}

/** Polls `probe` until it gives a value. */
export async function until<T>(what: string, probe: () => Promise<T | null> | T | null, timeoutMs = 45_000): Promise<T> {
  const end = Date.now() + timeoutMs;
  for (;;) {
    const v = await probe();
    if (v !== null) return v;
    if (Date.now() > end) throw new Error(`timed out waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 200));
  }
}

/** Writes a demo-based config into `dir` with port 0, its own database and inbox; `patch` may change the raw object. */
export function writeServiceConfig(
  dir: string,
  patch: (raw: Record<string, unknown>) => void = () => {},
): { configPath: string; inbox: string; db: string } {
  const raw = demoConfigRaw();
  const service = raw['service'] as Record<string, unknown>;
  const inbox = join(dir, 'inbox');
  const db = join(dir, 'nightjar.sqlite');
  service['port'] = 0;
  service['logLevel'] = 'info';
  service['databasePath'] = db;
  service['inbox'] = { path: inbox, settleMs: 300, seedDemo: true, schedule: '* * * * * *' };
  patch(raw);
  const configPath = join(dir, 'config.json');
  writeFileSync(configPath, JSON.stringify(raw));
  return { configPath, inbox, db };
}
