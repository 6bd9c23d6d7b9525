import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { rmSync } from 'node:fs';
import { UsageError, type CommandIo } from '../../src/commands/io.js';
import { elementsFromNoticeOrbit, main } from '../../src/commands/ephemeris.js';
import { ephemerisFromElements } from '../../src/orbit/ephemeris.js';
import { loadConfig } from '../../src/config/load.js';

function collectingIo(): CommandIo & { out: string[]; err: string[] } {
  const out: string[] = [];
  const err: string[] = [];
  return { out, err, stdout: (t) => out.push(t), stderr: (t) => err.push(t), env: {}, cwd: process.cwd() };
}

// An invented object and sender; the elements are made up for the test.
const orbitNotice = {
  format: 'nightjar.notice.v1',
  noticeId: 'test-orbit-0001',
  objectId: 'LR27C1M',
  issuedAt: '2027-03-04T05:00:00Z',
  sender: 'Test sender (invented)',
  observer: { lat: 32.87, lon: -105.48, height: 2790 },
  observations: [
    { t: '2027-03-04T04:00:00Z', ra: 150.1, dec: 10.2, sigma: 0.4 },
    { t: '2027-03-04T04:30:00Z', ra: 150.2, dec: 10.25, sigma: 0.4 },
  ],
  orbit: { epoch: '2027-03-04T00:00:00Z', q: 0.95, e: 0.25, i: 4, node: 163, peri: 200, tp: '2027-02-20T06:00:00Z', H: 24.5, G: 0.2 },
};

const dir = mkdtempSync(join(tmpdir(), 'nightjar-ephemeris-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
const write = (name: string, body: unknown) => {
  const path = join(dir, name);
  writeFileSync(path, typeof body === 'string' ? body : JSON.stringify(body));
  return path;
};
const orbitPath = write('orbit.json', orbitNotice);
const { observations: _tracklet, ...orbitOnlyNotice } = orbitNotice;
const orbitOnlyPath = write('orbit-only.json', orbitOnlyNotice);
const trackletOnlyPath = resolve('config/demo/notices/0001-close-approacher.json');

interface Answer<R = Row> { objectId: string; method: string; notes: string[]; trackletDistanceAu: { p5: number; p50: number; p95: number } | null; rows: R[] }
const answerOf = <R = Row>(io: { out: string[] }) => JSON.parse(io.out.join('')) as Answer<R>;

interface Row {
  t: string; ra: number; dec: number; raRate: number; decRate: number; unc: unknown; mag: number | null; magSigma: unknown;
  delta: number; r: number; phase: number; elong: number; alt: number; az: number; airmass: number | null;
}

describe('nightjar ephemeris', () => {
  it('prints one JSON row per requested time with exactly the documented fields', async () => {
    const io = collectingIo();
    const code = await main(['--notice', orbitOnlyPath, '--site', 'lantern-ridge', '--times', '2027-03-05T03:00:00Z,2027-03-05T04:00:00Z', '--members', '100', '--json'], io);
    expect(code).toBe(0);
    const answer = answerOf(io);
    expect(Object.keys(answer)).toEqual(['objectId', 'method', 'notes', 'trackletDistanceAu', 'rows']);
    expect(answer.trackletDistanceAu).toBeNull();
    expect(answer.rows).toHaveLength(2);
    expect(Object.keys(answer.rows[0]!)).toEqual(['t', 'ra', 'dec', 'raRate', 'decRate', 'unc', 'mag', 'magSigma', 'delta', 'r', 'phase', 'elong', 'alt', 'az', 'airmass']);
    expect(answer.rows[0]!.t).toBe('2027-03-05T03:00:00.000Z');
  });

  it('gives an orbit block every row an ellipse and a magnitude spread, and says in the notes that they come from the default element spread', async () => {
    const io = collectingIo();
    expect(await main(['--notice', orbitOnlyPath, '--site', 'lantern-ridge', '--times', '2027-03-05T03:00:00Z,2027-03-06T03:00:00Z', '--members', '200', '--json'], io)).toBe(0);
    const answer = answerOf<Row & { unc: { major: number; minor: number; pa: number }; magSigma: number }>(io);
    expect(answer.method).toBe('orbit-block');
    expect(answer.notes.join(' ')).toMatch(/default element spread \(no covariance given\)/);
    for (const row of answer.rows) {
      expect(Object.keys(row.unc)).toEqual(['major', 'minor', 'pa']);
      expect(row.unc.major).toBeGreaterThan(0);
      expect(row.magSigma).toBeGreaterThanOrEqual(0);
    }
  });

  it('takes the orbit block as the nominal: the same place as the orbit module for the site in the configuration, to 1 mas', async () => {
    const io = collectingIo();
    await main(['--notice', orbitOnlyPath, '--site', 'lantern-ridge', '--times', '2027-03-05T03:00:00Z', '--members', '100', '--json'], io);
    const [row] = answerOf(io).rows;
    const site = loadConfig({ env: {} }).sites.find((s) => s.id === 'lantern-ridge')!;
    const { elements, epochTt } = elementsFromNoticeOrbit(orbitNotice.orbit);
    const [direct] = ephemerisFromElements(elements, epochTt, site.location, [new Date('2027-03-05T03:00:00Z')], { photometry: { hMag: 24.5, g: 0.2 } });
    expect(Math.abs(row!.ra - direct!.ra) * Math.cos((direct!.dec * Math.PI) / 180) * 3600).toBeLessThan(0.001);
    expect(Math.abs(row!.dec - direct!.dec) * 3600).toBeLessThan(0.001);
    expect(row!.mag).toBeCloseTo(direct!.mag!, 2);
    expect(row!.delta).toBeCloseTo(direct!.delta, 9);
  });

  it('builds a time grid from --start, --end and --step, both ends included', async () => {
    const io = collectingIo();
    await main(['--notice', orbitOnlyPath, '--lat', '34.2', '--lon=-107.6', '--height', '2300', '--start', '2027-03-05T00:00:00Z', '--end', '2027-03-05T02:00:00Z', '--step', '30', '--members', '50', '--json'], io);
    const { rows } = answerOf(io);
    expect(rows.map((r) => r.t)).toEqual(['00:00', '00:30', '01:00', '01:30', '02:00'].map((hm) => `2027-03-05T${hm}:00.000Z`));
  });

  it('prints a table for people without --json', async () => {
    const io = collectingIo();
    expect(await main(['--notice', orbitOnlyPath, '--site', 'kestrel-hollow', '--times', '2027-03-05T03:00:00Z', '--members', '50'], io)).toBe(0);
    const text = io.out.join('');
    expect(text).toMatch(/^ephemeris of LR27C1M \(notice test-orbit-0001\) from kestrel-hollow/);
    expect(text).toMatch(/\n2027-03-05T03:00:00Z +\d{2} \d{2} \d{2}\.\d{2} +[+-]\d{2} \d{2} \d{2}\.\d/);
  });

  it('answers a tracklet-only notice with estimated rows carrying unc {major, minor, pa} and magSigma', async () => {
    const io = collectingIo();
    const args = ['--notice', trackletOnlyPath, '--site', 'lantern-ridge', '--times', '2026-11-30T07:43:12Z,2026-12-01T05:00:00Z', '--members', '200', '--seed', '3', '--json'];
    expect(await main(args, io)).toBe(0);
    const { rows } = answerOf<Row & { unc: { major: number; minor: number; pa: number }; magSigma: number }>(io);
    expect(rows).toHaveLength(2);
    expect(Object.keys(rows[0]!)).toEqual(['t', 'ra', 'dec', 'raRate', 'decRate', 'unc', 'mag', 'magSigma', 'delta', 'r', 'phase', 'elong', 'alt', 'az', 'airmass']);
    expect(Object.keys(rows[0]!.unc)).toEqual(['major', 'minor', 'pa']);
    expect(rows[1]!.unc.major).toBeGreaterThan(rows[0]!.unc.major);
    expect(rows[0]!.unc.major).toBeGreaterThanOrEqual(rows[0]!.unc.minor);
    expect(rows[0]!.magSigma).toBeGreaterThanOrEqual(0);
    // 50 min after its last position the nominal stays within 0.02 deg of the straight line through the
    // tracklet's last two positions (the survey site is not the follow-up site, hence the margin).
    const demo = JSON.parse(readFileSync(trackletOnlyPath, 'utf8')) as { observations: { t: string; ra: number }[] };
    const [a, b] = demo.observations.slice(-2);
    const perMs = (b!.ra - a!.ra) / (Date.parse(b!.t) - Date.parse(a!.t));
    const line = b!.ra + perMs * (Date.parse('2026-11-30T07:43:12Z') - Date.parse(b!.t));
    expect(Math.abs(rows[0]!.ra - line)).toBeLessThan(0.02);
    const again = collectingIo();
    expect(await main(args, again)).toBe(0);
    expect(again.out.join('')).toBe(io.out.join(''));
  });

  it("gives a tracklet-only notice the distance at the tracklet's mean time, 5-50-95 % in au, bracketing the nominal's distance from the tracklet's site then", async () => {
    const io = collectingIo();
    // The demo notice's site and the mean of its four positions' times (06:08:12.492 to 06:53:12.492 UTC).
    const args = ['--notice', trackletOnlyPath, '--lat', '32.87', '--lon=-105.48', '--height', '2790', '--times', '2026-11-30T06:30:42.492Z', '--members', '300', '--seed', '3'];
    expect(await main([...args, '--json'], io)).toBe(0);
    const answer = answerOf(io);
    const distance = answer.trackletDistanceAu!;
    expect(distance.p5).toBeGreaterThan(0);
    expect(distance.p5).toBeLessThanOrEqual(distance.p50);
    expect(distance.p50).toBeLessThanOrEqual(distance.p95);
    expect(answer.rows[0]!.delta).toBeGreaterThanOrEqual(distance.p5);
    expect(answer.rows[0]!.delta).toBeLessThanOrEqual(distance.p95);
    const text = collectingIo();
    expect(await main(args, text)).toBe(0);
    expect(text.out.join('')).toMatch(/distance from the tracklet's site at its mean time: [\d.]+ \/ [\d.]+ \/ [\d.]+ au \(5 \/ 50 \/ 95 % of the virtual orbits\)/);
  });

  it('prints the uncertainty columns in text for a tracklet-only notice', async () => {
    const io = collectingIo();
    expect(await main(['--notice', trackletOnlyPath, '--site', 'lantern-ridge', '--times', '2026-11-30T07:43:12Z', '--members', '100'], io)).toBe(0);
    const text = io.out.join('');
    expect(text).toMatch(/estimated from the tracklet alone/);
    expect(text).toMatch(/unc 1-sigma/);
  });

  it('estimates with the prior asked for: the notes name it and the region a day later differs', async () => {
    const answerWith = async (prior: string) => {
      const io = collectingIo();
      const args = ['--notice', trackletOnlyPath, '--site', 'lantern-ridge', '--times', '2026-12-01T05:00:00Z', '--members', '300', '--seed', '3', '--range-prior', prior, '--json'];
      expect(await main(args, io)).toBe(0);
      return answerOf<{ unc: { major: number } }>(io);
    };
    const mixture = await answerWith('mixture');
    const powerLaw = await answerWith('powerLaw');
    expect(mixture.notes.join(' ')).toMatch(/range prior: mixture of the population model and close encounters/);
    expect(powerLaw.notes.join(' ')).toMatch(/range prior: rho\^0\.5 power law/);
    expect(powerLaw.rows[0]!.unc.major).not.toBeCloseTo(mixture.rows[0]!.unc.major, 0);
  });

  it('names the range-prior option and its choices for an unknown prior', async () => {
    await expect(main(['--notice', trackletOnlyPath, '--site', 'lantern-ridge', '--times', '2026-11-30T06:00:00Z', '--range-prior', 'flat'], collectingIo())).rejects.toThrow(
      /--range-prior: flat; expected one of auto, mixture, population, encounter, powerLaw/,
    );
  });

  it('refuses a member count that is not a whole number from 10 to 100000', async () => {
    await expect(main(['--notice', trackletOnlyPath, '--site', 'lantern-ridge', '--times', '2026-11-30T06:00:00Z', '--members', '5'], collectingIo())).rejects.toThrow(UsageError);
    await expect(main(['--notice', trackletOnlyPath, '--site', 'lantern-ridge', '--times', '2026-11-30T06:00:00Z', '--seed', '1.5'], collectingIo())).rejects.toThrow(/--seed/);
  });

  it('does not check the age of a notice: a notice from the future is accepted', async () => {
    const future = write('future.json', { ...orbitOnlyNotice, issuedAt: '2027-06-01T00:00:00Z' });
    expect(await main(['--notice', future, '--site', 'lantern-ridge', '--times', '2027-03-05T03:00:00Z', '--members', '50', '--json'], collectingIo())).toBe(0);
  });

  it("refuses times past the leap-second table's validity horizon, saying so", async () => {
    await expect(main(['--notice', orbitOnlyPath, '--site', 'lantern-ridge', '--times', '2031-01-01T00:00:00Z', '--members', '50'], collectingIo())).rejects.toThrow(
      /^--times 2031-01-01T00:00:00Z: at or past 2027-06-28T00:00:00Z, where the leap-second table .* stops being valid/,
    );
  });

  it('exits 1 and lists every problem by path for an invalid notice', async () => {
    const bad = write('bad.json', { ...orbitNotice, orbit: { ...orbitNotice.orbit, q: -1 } });
    const io = collectingIo();
    expect(await main(['--notice', bad, '--site', 'lantern-ridge', '--times', '2027-03-05T03:00:00Z'], io)).toBe(1);
    expect(io.err.join('')).toMatch(/orbit\.q: expected a number > 0/);
  });

  it('refuses an unknown site, listing the configured ones', async () => {
    await expect(main(['--notice', orbitPath, '--site', 'nowhere', '--times', '2027-03-05T03:00:00Z'], collectingIo())).rejects.toThrow(
      /unknown site "nowhere" \(configured: lantern-ridge, kestrel-hollow\)/,
    );
  });

  it('refuses a site given both by id and by coordinates', async () => {
    await expect(main(['--notice', orbitPath, '--site', 'lantern-ridge', '--lat', '10', '--times', '2027-03-05T03:00:00Z'], collectingIo())).rejects.toThrow(UsageError);
  });

  it('names the option of an out-of-range ad-hoc latitude', async () => {
    await expect(main(['--notice', orbitPath, '--lat', '95', '--lon', '10', '--height', '0', '--times', '2027-03-05T03:00:00Z'], collectingIo())).rejects.toThrow(/^--lat 95: expected a number <= 90$/);
  });

  it('refuses a time without a zone, saying what is expected', async () => {
    await expect(main(['--notice', orbitPath, '--site', 'lantern-ridge', '--times', '2027-03-05T03:00:00'], collectingIo())).rejects.toThrow(
      /--times: "2027-03-05T03:00:00" is not an ISO-8601 UTC time/,
    );
  });

  it('refuses a grid with a non-positive step', async () => {
    await expect(
      main(['--notice', orbitPath, '--site', 'lantern-ridge', '--start', '2027-03-05T00:00:00Z', '--end', '2027-03-05T01:00:00Z', '--step', '0'], collectingIo()),
    ).rejects.toThrow(/--step: 0 minutes/);
  });

  it('reads the demo notice file it points at in its tracklet-only test', () => {
    expect(JSON.parse(readFileSync(trackletOnlyPath, 'utf8'))).not.toHaveProperty('orbit');
  });
});
