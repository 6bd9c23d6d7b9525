import { mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { UsageError, type CommandIo } from '../../src/commands/io.js';
import { main } from '../../src/commands/simulate.js';
import { parseNotice } from '../../src/intake/notice.js';

function collectingIo(): CommandIo & { out: string[]; err: string[] } {
  const out: string[] = [];
  const err: string[] = [];
  return { out, err, stdout: (t) => out.push(t), stderr: (t) => err.push(t), env: {}, cwd: process.cwd() };
}

const now = '2026-12-02T04:00:00Z';
const dir = mkdtempSync(join(tmpdir(), 'nightjar-simulate-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('nightjar simulate', () => {
  it('writes one valid notice file per object into --out, and no temporary files', async () => {
    const io = collectingIo();
    expect(await main(['--now', now, '--count', '5', '--out', join(dir, 'inbox'), '--seed', '4'], io)).toBe(0);
    const files = readdirSync(join(dir, 'inbox'));
    expect(files).toHaveLength(5);
    expect(files.every((f) => f.endsWith('.json') && !f.startsWith('.'))).toBe(true);
    for (const f of files) {
      const parsed = parseNotice(JSON.parse(readFileSync(join(dir, 'inbox', f), 'utf8')), { now: new Date(now), checkAge: true });
      expect(parsed.ok, f).toBe(true);
    }
  });

  it('adds the orbit block with --with-orbit', async () => {
    const io = collectingIo();
    expect(await main(['--now', now, '--count', '2', '--with-orbit'], io)).toBe(0);
    for (const line of io.out.join('').trim().split('\n')) expect((JSON.parse(line) as { orbit?: unknown }).orbit).toBeDefined();
  });

  it('prints the notices as JSON lines without --out', async () => {
    const io = collectingIo();
    expect(await main(['--now', now, '--count', '3'], io)).toBe(0);
    const lines = io.out.join('').trim().split('\n');
    expect(lines).toHaveLength(3);
    for (const line of lines) expect(parseNotice(JSON.parse(line), { now: new Date(now), checkAge: true }).ok).toBe(true);
  });

  it('refuses a count out of range and a bad clock as usage errors', async () => {
    await expect(main(['--count', '0'], collectingIo())).rejects.toThrow(UsageError);
    await expect(main(['--count', '201'], collectingIo())).rejects.toThrow(/--count/);
    await expect(main(['--now', '2026-12-02'], collectingIo())).rejects.toThrow(/--now/);
  });
});
