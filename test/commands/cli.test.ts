import { execFileSync } from 'node:child_process';
import { symlinkSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { runCli } from '../../src/cli.js';
import { PROJECT_ROOT } from '../../src/config/load.js';
import { tempDir } from '../helpers.js';

function collectingIo() {
  const out: string[] = [];
  const err: string[] = [];
  return { io: { stdout: (t: string) => out.push(t), stderr: (t: string) => err.push(t), env: {}, cwd: PROJECT_ROOT }, out, err };
}

describe('the nightjar command', () => {
  it('runs through a link, as npm installs its bin', () => {
    const dir = tempDir('nightjar-bin-');
    const link = join(dir, 'nightjar');
    symlinkSync(join(PROJECT_ROOT, 'src', 'cli.ts'), link);
    const out = execFileSync(process.execPath, ['--import', 'tsx', link, 'check-config'], { cwd: PROJECT_ROOT, env: { ...process.env, NIGHTJAR_CONFIG: '' } }).toString();
    expect(out).toMatch(/^configuration is valid: 2 site\(s\)/);
  });

  it('names an unknown command and lists the commands', async () => {
    const { io, err } = collectingIo();
    expect(await runCli(['launch'], io)).toBe(2);
    expect(err.join('')).toContain('unknown command "launch"');
    expect(err.join('')).toContain('plan');
  });

  it('refuses a renamed command, naming its new name', async () => {
    const { io, err, out } = collectingIo();
    expect(await runCli(['ephem', '--notice', 'x.json'], io)).toBe(2);
    expect(err.join('')).toBe('the command "ephem" is now called "ephemeris": run "nightjar ephemeris" with the same options\n');
    expect(out).toEqual([]);
  });

  it('turns a bad option into a usage message with exit code 2', async () => {
    const { io, err } = collectingIo();
    expect(await runCli(['night', '--site'], io)).toBe(2);
    expect(err.join('')).toMatch(/^nightjar night: /);
  });
});
