import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { UsageError, type CommandIo } from '../../src/commands/io.js';
import { main } from '../../src/commands/plan.js';
import { trackletOf } from '../../src/commands/notice-file.js';
import { loadConfig } from '../../src/config/load.js';
import { parseNotice } from '../../src/intake/notice.js';
import { estimateObject } from '../../src/orbit/estimation/index.js';
import { planObject, type ObjectPlan } from '../../src/planning/plan-object.js';
import { simulateNight } from '../../src/planning/simulate.js';
import { approachStartFor, chainPhaseMs } from '../../src/planning/reuse.js';
import { chainedTrackSource } from '../../src/planning/track-source.js';

function collectingIo(): CommandIo & { out: string[]; err: string[] } {
  const out: string[] = [];
  const err: string[] = [];
  return { out, err, stdout: (t) => out.push(t), stderr: (t) => err.push(t), env: {}, cwd: process.cwd() };
}

const now = '2026-12-02T04:00:00Z';
// An invented ordinary object from the demo generator (seed 1, second notice).
const notice = simulateNight({ now: new Date(now), count: 2, seed: 1 })[1]!.notice;
const dir = mkdtempSync(join(tmpdir(), 'nightjar-plan-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
const write = (name: string, body: unknown) => {
  const path = join(dir, name);
  writeFileSync(path, typeof body === 'string' ? body : JSON.stringify(body));
  return path;
};
const noticePath = write('notice.json', notice);

describe('nightjar plan', () => {
  it('prints, as JSON, the same plan as the estimator and planner give for the notice', async () => {
    const io = collectingIo();
    expect(await main(['--notice', noticePath, '--now', now, '--json', '--members', '40', '--seed', '3'], io)).toBe(0);
    const printed = JSON.parse(io.out.join('')) as { plan: ObjectPlan };
    const parsed = parseNotice(notice, { now: new Date(now), checkAge: false });
    if (!parsed.ok) throw new Error('the invented notice must be valid');
    const config = loadConfig({ env: {}, cwd: process.cwd() });
    // The estimate's clock is where its close-approach search starts; its track is propagated in a chain of pieces (planning/reuse.ts).
    const observations = trackletOf(parsed.notice);
    const estimate = estimateObject({ objectId: parsed.notice.objectId, observations, orbit: parsed.notice.orbit, now: approachStartFor(observations, new Date(now)), members: 40, seed: 3 });
    const track = chainedTrackSource(estimate.core, chainPhaseMs(3));
    const direct = planObject({ estimate, track, sites: config.sites, now: new Date(now), horizonH: config.planning.horizonH });
    expect(printed.plan).toEqual(JSON.parse(JSON.stringify(direct)));
    expect(printed.plan.sites.map((s) => s.siteId)).toEqual(['lantern-ridge', 'kestrel-hollow']);
    expect(printed.plan.sites.some((s) => s.requests.length > 0)).toBe(true);
  }, 20_000);

  it('plans one site with --site', async () => {
    const io = collectingIo();
    expect(await main(['--notice', noticePath, '--now', now, '--json', '--members', '20', '--site', 'kestrel-hollow'], io)).toBe(0);
    const printed = JSON.parse(io.out.join('')) as { plan: ObjectPlan };
    expect(printed.plan.sites.map((s) => s.siteId)).toEqual(['kestrel-hollow']);
  });

  it('prints requests with their windows, sequences, rates and score factors as text', async () => {
    const io = collectingIo();
    expect(await main(['--notice', noticePath, '--now', now, '--members', '20', '--site', 'lantern-ridge'], io)).toBe(0);
    const text = io.out.join('');
    expect(text).toContain('site lantern-ridge');
    expect(text).toMatch(/photometry {2}score \d+\.\d/);
    expect(text).toContain('tracking non-sidereal raRate');
    expect(text).toMatch(/urgency +\d\.\d{3} x 0\.30/);
    expect(text).toContain('not an impact prediction');
  });

  it('says there is nothing to plan for a retraction', async () => {
    const retraction = { format: 'nightjar.notice.v1', noticeId: 'r-1', objectId: 'HF26XMEE', issuedAt: now, sender: 'Test sender (invented)', observer: { lat: 1, lon: 2, height: 3 }, retracted: true, reason: 'a star, not a moving object' };
    const io = collectingIo();
    expect(await main(['--notice', write('retraction.json', retraction), '--now', now], io)).toBe(0);
    expect(io.out.join('')).toContain('nothing to plan');
  });

  it('reports an invalid notice with its field and exits 1', async () => {
    const io = collectingIo();
    expect(await main(['--notice', write('bad.json', { ...notice, observations: [] }), '--now', now], io)).toBe(1);
    expect(io.err.join('')).toContain('observations');
  });

  it('says a file of several notices holds how many and that it takes one', async () => {
    const io = collectingIo();
    expect(await main(['--notice', write('two.json', [notice, notice]), '--now', now], io)).toBe(1);
    expect(io.err.join('')).toMatch(/holds 2 notices .* takes a file with one notice object/);
  });

  it('refuses an unknown site, a missing notice and a bad clock as usage errors', async () => {
    await expect(main(['--notice', noticePath, '--site', 'nowhere'], collectingIo())).rejects.toThrow(UsageError);
    await expect(main(['--now', now], collectingIo())).rejects.toThrow(/--notice FILE is required/);
    await expect(main(['--notice', noticePath, '--now', 'tonight'], collectingIo())).rejects.toThrow(/--now/);
    await expect(main(['--notice', noticePath, '--members', '0'], collectingIo())).rejects.toThrow(/--members/);
  });
});
