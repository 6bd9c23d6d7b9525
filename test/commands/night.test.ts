import { describe, expect, it } from 'vitest';
import { UsageError, type CommandIo } from '../../src/commands/io.js';
import { main } from '../../src/commands/night.js';

function collectingIo(): CommandIo & { out: string[]; err: string[] } {
  const out: string[] = [];
  const err: string[] = [];
  return { out, err, stdout: (t) => out.push(t), stderr: (t) => err.push(t), env: {}, cwd: process.cwd() };
}

describe('nightjar night', () => {
  it('prints the demo site night of 2027-03-15 as JSON with ISO UTC times', async () => {
    const io = collectingIo();
    expect(await main(['--site', 'lantern-ridge', '--date', '2027-03-15', '--json'], io)).toBe(0);
    const json = JSON.parse(io.out.join('')) as { siteId: string; duskUtc: string; dark: { hours: number }; moon: { illuminatedFraction: number } };
    expect(json.siteId).toBe('lantern-ridge');
    expect(json.duskUtc).toMatch(/^2027-03-16T02:1\d:\d{2}\.\d{3}Z$/);
    expect(json.dark.hours).toBeGreaterThan(9);
    expect(json.moon.illuminatedFraction).toBeGreaterThan(0.4);
    expect(json.moon.illuminatedFraction).toBeLessThan(0.7);
  });

  it('prints text for people by default', async () => {
    const io = collectingIo();
    expect(await main(['--site', 'kestrel-hollow', '--date', '2027-03-15'], io)).toBe(0);
    expect(io.out.join('')).toMatch(/night of 2027-03-15 at kestrel-hollow[\s\S]*dusk \(Sun -12 deg\) +2027-03-15T09:49:\d\dZ/);
  });

  it('explains which night a date means in its help', async () => {
    const io = collectingIo();
    expect(await main(['--help'], io)).toBe(0);
    expect(io.out.join('')).toMatch(/begins on the evening of --date/);
  });

  it('refuses an unknown site, listing the configured ones', async () => {
    await expect(main(['--site', 'nowhere', '--date', '2027-03-15'], collectingIo())).rejects.toThrow(
      /unknown site "nowhere" \(configured: lantern-ridge, kestrel-hollow\)/,
    );
  });

  it('refuses a malformed date as a usage error', async () => {
    await expect(main(['--site', 'lantern-ridge', '--date', '15/03/2027'], collectingIo())).rejects.toThrow(UsageError);
  });

  it('requires --site', async () => {
    await expect(main(['--date', '2027-03-15'], collectingIo())).rejects.toThrow(/--site ID is required/);
  });
});
