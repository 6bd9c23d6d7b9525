import { existsSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { runCli } from '../../src/cli.js';
import { PROJECT_ROOT } from '../../src/config/load.js';
import { tempDir } from '../helpers.js';

/**
 * A user's mistake on the command line gets a message that names the option (or
 * the environment variable) and says what to do: no stack trace, no internal
 * field names, and input outside the valid range is refused with the limit.
 */
async function run(argv: string[], env: Record<string, string> = {}): Promise<{ code: number; err: string; out: string }> {
  const out: string[] = [];
  const err: string[] = [];
  const code = await runCli(argv, { stdout: (t) => out.push(t), stderr: (t) => err.push(t), env, cwd: PROJECT_ROOT });
  return { code, err: err.join(''), out: out.join('') };
}

/** A stack trace line as node prints it. */
const STACK = /\n\s+at /;

const retraction = (() => {
  const path = join(tempDir('nightjar-user-errors-'), 'retraction.json');
  writeFileSync(
    path,
    JSON.stringify({
      format: 'nightjar.notice.v1',
      noticeId: 'ush-2026-11-30-r7',
      objectId: 'USH26R7',
      issuedAt: '2026-11-30T09:40:00Z',
      sender: 'Upper Shale Sky Watch (invented demo sender)',
      observer: { lat: 32.87, lon: -105.48, height: 2790 },
      retracted: true,
      reason: 'a satellite glint',
    }),
  );
  return path;
})();
const NOTICE = join(PROJECT_ROOT, 'config', 'demo', 'notices', '0001-close-approacher.json');

describe('command-line errors', () => {
  it('ephemeris on a retraction says the file has no positions and what to give instead, without a stack trace', async () => {
    const { code, err } = await run(['ephemeris', '--notice', retraction, '--site', 'lantern-ridge', '--times', '2026-12-01T00:00:00Z']);
    expect(code).toBe(1);
    expect(err).toMatch(/retracts USH26R7 \(a satellite glint\) and carries no positions or orbit; give --notice a file with observations or an orbit block/);
    expect(err).not.toMatch(STACK);
  });

  it('check-config blames NIGHTJAR_PORT, with its value, when the bad port came from the environment', async () => {
    const { code, err } = await run(['check-config'], { NIGHTJAR_PORT: '99999' });
    expect(code).toBe(1);
    expect(err).toContain('invalid configuration in the environment variable NIGHTJAR_PORT:');
    expect(err).toContain('NIGHTJAR_PORT=99999 (the environment, in place of service.port): expected a number <= 65535');
    expect(err).not.toContain('default.json');
  });

  it('check-config still blames the file for the file\'s own bad port', async () => {
    const path = join(tempDir('nightjar-user-errors-'), 'bad-port.json');
    const raw = JSON.parse(await import('node:fs').then((fs) => fs.readFileSync(join(PROJECT_ROOT, 'config', 'default.json'), 'utf8'))) as { service: { port: number } };
    raw.service.port = 70000;
    writeFileSync(path, JSON.stringify(raw));
    const { code, err } = await run(['check-config', '--config', path]);
    expect(code).toBe(1);
    expect(err).toContain(`invalid configuration in ${path}:\n  service.port: expected a number <= 65535`);
  });

  it('night names --date for a date that does not exist, not an internal field', async () => {
    const { code, err } = await run(['night', '--site', 'lantern-ridge', '--date', '2027-02-30']);
    expect(code).toBe(2);
    expect(err).toBe('nightjar night: --date 2027-02-30: no such calendar date\n');
  });

  it('night refuses a date past the leap-second table, quoting the limit and the last date it can compute', async () => {
    const { code, err } = await run(['night', '--site', 'lantern-ridge', '--date', '9999-06-21']);
    expect(code).toBe(2);
    expect(err).toMatch(/^nightjar night: --date 9999-06-21: the night ends past 2027-06-28T00:00:00Z, where the leap-second table .* give a date from 1972-01-01 to 2027-06-26/);
  });

  it('exposure names --slit and lists the slits to choose from, not an internal field', async () => {
    const { code, err } = await run(['exposure', '--site', 'lantern-ridge', '--instrument', 'spectrograph', '--mag', '17.5', '--rate', '0.5', '--slit', '5']);
    expect(code).toBe(2);
    expect(err).toBe('nightjar exposure: --slit 5: not a slit of the spectrograph at "lantern-ridge"; give one of 1, 1.5, 2, 3 (arcsec)\n');
  });

  it('exposure refuses a rate above the mount\'s limit, quoting the limit', async () => {
    const { code, err } = await run(['exposure', '--site', 'lantern-ridge', '--instrument', 'spectrograph', '--mag', '17.5', '--rate', '100']);
    expect(code).toBe(2);
    expect(err).toContain('--rate 100: faster than the mount at "lantern-ridge" can track (60 arcsec/s, limits.maxRateArcsecPerS in the configuration)');
  });

  it('ephemeris names --lat and its limit in plain words for a latitude out of range', async () => {
    const { code, err } = await run(['ephemeris', '--notice', NOTICE, '--lat', '95', '--lon', '10', '--height', '0', '--times', '2026-12-01T00:00:00Z']);
    expect(code).toBe(2);
    expect(err).toBe('nightjar ephemeris: --lat 95: expected a number <= 90\n');
  });

  it('ephemeris refuses a time past the leap-second table, naming the option and the limit, without a stack trace', async () => {
    const { code, err } = await run(['ephemeris', '--notice', NOTICE, '--site', 'lantern-ridge', '--times', '2027-08-01T00:00:00Z']);
    expect(code).toBe(2);
    expect(err).toMatch(/^nightjar ephemeris: --times 2027-08-01T00:00:00Z: at or past 2027-06-28T00:00:00Z, where the leap-second table/);
    expect(err).not.toMatch(STACK);
  });

  it('plan refuses a --now whose horizon runs past the leap-second table, saying so', async () => {
    const { code, err } = await run(['plan', '--notice', NOTICE, '--now', '2027-06-27T00:00:00Z']);
    expect(code).toBe(2);
    expect(err).toMatch(/--now 2027-06-27T00:00:00Z: the plan's horizon of 36 h reaches past 2027-06-28T00:00:00Z/);
  });

  it('migrate --db refuses a path in a missing folder and does not create it', async () => {
    const missing = join(tempDir('nightjar-user-errors-'), 'no', 'such');
    const { code, err } = await run(['migrate', '--db', join(missing, 'nightjar.sqlite')]);
    expect(code).toBe(2);
    expect(err).toContain(`the folder ${missing} does not exist; create it first (mkdir -p ${missing})`);
    expect(existsSync(missing)).toBe(false);
  });
});
