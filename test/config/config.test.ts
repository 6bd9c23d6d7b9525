import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { ConfigError, loadConfig, parseConfig } from '../../src/config/load.js';
import { main as checkConfig } from '../../src/commands/check-config.js';
import { demoConfigRaw, tempDir } from '../helpers.js';

function issuesOf(raw: unknown): string[] {
  try {
    parseConfig(raw);
  } catch (err) {
    if (err instanceof ConfigError) return err.issues.map((i) => `${i.path}: ${i.message}`);
    throw err;
  }
  return [];
}

function collectingIo(env: Record<string, string> = {}) {
  const out: string[] = [];
  const err: string[] = [];
  return { io: { stdout: (t: string) => out.push(t), stderr: (t: string) => err.push(t), env, cwd: process.cwd() }, out, err };
}

describe('configuration', () => {
  it('accepts the embedded demo configuration with two sites', () => {
    const config = loadConfig({ env: {} });
    expect(config.sites.map((s) => s.id)).toEqual(['lantern-ridge', 'kestrel-hollow']);
  });

  it('names a negative minimum altitude by its path', () => {
    const raw = demoConfigRaw();
    (raw['sites'] as { limits: { minAltitudeDeg: number } }[])[0]!.limits.minAltitudeDeg = -5;
    expect(issuesOf(raw)).toEqual(['sites[0].limits.minAltitudeDeg: expected a number >= 0']);
  });

  it('takes the range prior from planning.rangePrior, auto unless set, and names an unknown one by its path', () => {
    expect(loadConfig({ env: {} }).planning.rangePrior).toBe('auto');
    const raw = demoConfigRaw();
    raw['planning'] = { ...(raw['planning'] as object), rangePrior: 'flat' };
    const issues = issuesOf(raw);
    expect(issues).toHaveLength(1);
    expect(issues[0]).toMatch(/^planning\.rangePrior: .*"auto"\|"mixture"\|"population"\|"encounter"\|"powerLaw"/);
  });

  it("refuses a V filter whose dark sky contradicts the site's own dark V sky, naming the filter's field", () => {
    const raw = demoConfigRaw();
    const site = (raw['sites'] as { darkSkyVMagPerArcsec2: number; imager: { filters: { name: string; darkSkyMagPerArcsec2?: number }[] } }[])[1]!;
    site.darkSkyVMagPerArcsec2 = 21.4;
    const v = site.imager.filters.findIndex((f) => f.name === 'V');
    site.imager.filters[v]!.darkSkyMagPerArcsec2 = 21.8;
    expect(issuesOf(raw)).toEqual([
      `sites[1].imager.filters[${v}].darkSkyMagPerArcsec2: 21.8 contradicts the site's darkSkyVMagPerArcsec2 21.4: a V filter's dark sky must equal the site's V sky (or be left out)`,
    ]);
  });

  it("accepts a V filter that leaves its dark sky out (the site's V sky is used)", () => {
    const raw = demoConfigRaw();
    const site = (raw['sites'] as { imager: { filters: { name: string; darkSkyMagPerArcsec2?: number }[] } }[])[1]!;
    delete site.imager.filters.find((f) => f.name === 'V')!.darkSkyMagPerArcsec2;
    expect(issuesOf(raw)).toEqual([]);
  });

  it('takes the near-Earth fraction weight by its name and refuses its old name, naming the new one', () => {
    const raw = demoConfigRaw();
    raw['planning'] = { ...(raw['planning'] as object), weights: { nearEarthFraction: 0.5 } };
    expect(parseConfig(raw).planning.weights.nearEarthFraction).toBe(0.5);
    raw['planning'] = { ...(raw['planning'] as object), weights: { neoLikeness: 0.5 } };
    expect(issuesOf(raw)).toEqual(['planning.weights.neoLikeness: renamed: use nearEarthFraction (the weight of the fraction of virtual orbits with q < 1.3 au)']);
  });

  it('lists every problem, not only the first', () => {
    const raw = demoConfigRaw();
    const site = (raw['sites'] as Record<string, unknown>[])[1]!;
    site['mount'] = 'fork';
    (site['limits'] as Record<string, unknown>)['sunAvoidanceDeg'] = 'wide';
    delete (site['telescope'] as Record<string, unknown>)['apertureM'];
    const issues = issuesOf(raw);
    expect(issues).toHaveLength(3);
    expect(issues).toContain('sites[1].limits.sunAvoidanceDeg: expected number, received string');
    expect(issues.some((i) => i.startsWith('sites[1].mount:'))).toBe(true);
    expect(issues.some((i) => i.startsWith('sites[1].telescope.apertureM:'))).toBe(true);
  });

  it('refuses an unknown field so a typo is not silently ignored', () => {
    const raw = demoConfigRaw();
    (raw['sites'] as Record<string, unknown>[])[0]!['minAltitude'] = 30;
    expect(issuesOf(raw)).toEqual(['sites[0]: unknown field(s): minAltitude']);
  });

  it('refuses two sites with the same id', () => {
    const raw = demoConfigRaw();
    const sites = raw['sites'] as { id: string }[];
    sites[1]!.id = sites[0]!.id;
    expect(issuesOf(raw)).toEqual(['sites[1].id: duplicate site id "lantern-ridge"']);
  });

  it('takes the port and database from NIGHTJAR_PORT and NIGHTJAR_DB', () => {
    const config = loadConfig({ env: { NIGHTJAR_PORT: '9123', NIGHTJAR_DB: '/tmp/x.sqlite' } });
    expect(config.service.port).toBe(9123);
    expect(config.service.databasePath).toBe('/tmp/x.sqlite');
  });

  it('reports a bad NIGHTJAR_PORT by the variable and the field it stands for', () => {
    expect(() => loadConfig({ env: { NIGHTJAR_PORT: '70000' } })).toThrow(
      /^invalid configuration in the environment variable NIGHTJAR_PORT:\n {2}NIGHTJAR_PORT=70000 \(the environment, in place of service\.port\): expected a number <= 65535$/,
    );
  });

  it('reads the file named by NIGHTJAR_CONFIG', () => {
    const dir = tempDir();
    const raw = demoConfigRaw();
    (raw['sites'] as unknown[]).splice(1);
    writeFileSync(join(dir, 'one-site.json'), JSON.stringify(raw));
    const config = loadConfig({ env: { NIGHTJAR_CONFIG: join(dir, 'one-site.json') } });
    expect(config.sites).toHaveLength(1);
  });

  it('check-config prints every problem by path and exits 1', async () => {
    const dir = tempDir();
    const raw = demoConfigRaw();
    (raw['sites'] as { limits: { minAltitudeDeg: number } }[])[0]!.limits.minAltitudeDeg = -5;
    writeFileSync(join(dir, 'bad.json'), JSON.stringify(raw));
    const { io, err } = collectingIo();
    const code = await checkConfig(['--config', join(dir, 'bad.json')], io);
    expect(code).toBe(1);
    expect(err.join('')).toContain('sites[0].limits.minAltitudeDeg: expected a number >= 0');
  });

  it('check-config exits 0 on the demo configuration', async () => {
    const { io, out } = collectingIo();
    expect(await checkConfig([], io)).toBe(0);
    expect(out.join('')).toContain('2 site(s)');
  });

  it("check-config says until when the leap-second table is valid, and what happens past it", async () => {
    const { io, out } = collectingIo();
    expect(await checkConfig([], io)).toBe(0);
    expect(out.join('')).toMatch(/leap-second table \(IERS Bulletin C.*\) valid until 2027-06-28T00:00:00\.000Z: orbits are refused past it/);
  });

  it('check-config reports a file that is not JSON', async () => {
    const dir = tempDir();
    writeFileSync(join(dir, 'broken.json'), '{"sites": [');
    const { io, err } = collectingIo();
    expect(await checkConfig(['--config', join(dir, 'broken.json')], io)).toBe(1);
    expect(err.join('')).toMatch(/\(file\): not valid JSON/);
  });
});
