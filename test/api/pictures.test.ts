import type { FastifyInstance } from 'fastify';
import { afterEach, beforeAll, describe, expect, it } from 'vitest';
import { buildApp } from '../../src/api/app.js';
import { currentLocalDate } from '../../src/api/routes/pictures.js';
import { MIGRATIONS_DIR } from '../../src/config/load.js';
import type { ObjectEstimate } from '../../src/orbit/estimate-types.js';
import type { AssessmentSummary } from '../../src/planning/assess.js';
import type { NewRequest } from '../../src/store/requests.js';
import { byClass, parseXml, textOf } from '../views/xml.js';
import { INVENTED, NOW_ISO, inventedEstimate, plannedAssessment, storeAssessed, type RequestJson } from '../views/fixtures.js';
import { DEMO_TOKENS, demoConfig, fixedClock, memoryStore } from '../helpers.js';

const config = demoConfig();
const lantern = config.sites.find((s) => s.id === 'lantern-ridge')!;
let app: FastifyInstance | null = null;
afterEach(async () => {
  await app?.close();
  app = null;
});

// Planned once (the planner takes a fraction of a second per object); each test gets its own database.
const estimates = new Map<string, ObjectEstimate>();
const planned = new Map<string, { requests: NewRequest[]; summary: AssessmentSummary }>();
beforeAll(() => {
  INVENTED.forEach((o, i) => {
    const estimate = inventedEstimate(o, { members: i === 0 });
    estimates.set(o.objectId, estimate);
    planned.set(o.objectId, plannedAssessment(estimate, config.sites));
  });
});

async function setup(options: { withEstimates?: boolean; now?: string } = {}) {
  const clock = fixedClock(options.now ?? NOW_ISO);
  const store = memoryStore(clock);
  storeAssessed(store, planned, { sender: 'Invented Survey (test)', receivedAt: '2027-03-04T05:00:00.000Z', assessedAt: '2027-03-04T05:30:00.000Z' });
  app = await buildApp({
    config,
    store,
    clock,
    migrationsDir: MIGRATIONS_DIR,
    ...(options.withEstimates ? { estimateFor: (id: string) => estimates.get(id) ?? null } : {}),
  });
  return { app, store };
}

const scheduler = { authorization: `Bearer ${DEMO_TOKENS.scheduler}` };

async function queueJson(site: string): Promise<RequestJson[]> {
  const res = await app!.inject({ url: `/v1/queue?site=${site}&from=2027-03-04T00:00:00Z&to=2027-03-05T00:00:00Z&limit=500`, headers: scheduler });
  expect(res.statusCode).toBe(200);
  return res.json<{ items: RequestJson[] }>().items;
}

const tonight = async (query = '?date=2027-03-03') => parseXml((await app!.inject({ url: `/v1/sites/lantern-ridge/tonight.svg${query}` })).body);

describe('GET /v1/sites/:id/tonight.svg', () => {
  it('answers an SVG document that parses as XML', async () => {
    await setup();
    const res = await app!.inject({ url: '/v1/sites/lantern-ridge/tonight.svg?date=2027-03-03' });
    expect(res.statusCode).toBe(200);
    expect(res.headers['content-type']).toBe('image/svg+xml; charset=utf-8');
    expect(parseXml(res.body).name).toBe('svg');
  });

  it('has a row for every object with queued or leased requests at the site, leased ones included', async () => {
    await setup();
    const queue = await queueJson('lantern-ridge');
    const leased = queue.find((r) => r.objectId === 'QV27C02')!;
    const lease = await app!.inject({ method: 'POST', url: `/v1/requests/${leased.id}/lease`, headers: scheduler, payload: { holder: 'queue-a', seconds: 600 } });
    expect(lease.statusCode).toBe(200);
    const root = await tonight();
    const rows = byClass(root, 'object-row').map((e) => e.attrs['data-object-id']);
    expect([...rows].sort()).toEqual([...new Set(queue.map((r) => r.objectId))].sort());
    expect(byClass(root, 'request-mark').find((e) => e.attrs['data-request-id'] === leased.id)!.attrs['data-state']).toBe('leased');
  });

  it('marks each request with the score, window, recommended start and duration of the queue JSON', async () => {
    await setup();
    const queue = await queueJson('lantern-ridge');
    const drawn = new Map(byClass(await tonight(), 'request-mark').map((e) => [e.attrs['data-request-id'], e]));
    expect(drawn.size).toBe(queue.length);
    for (const r of queue) {
      const mark = drawn.get(r.id)!;
      expect(Number(mark.attrs['data-score'])).toBe(r.score);
      expect(mark.attrs['data-window-start']).toBe(r.window.start);
      expect(mark.attrs['data-window-end']).toBe(r.window.end);
      expect(mark.attrs['data-recommended-start']).toBe(r.recommendedStart);
      expect(Number(mark.attrs['data-duration-s'])).toBe(r.plan.expectedDurationS);
    }
  });

  it('ranks the rows by the best score in the queue JSON', async () => {
    await setup();
    const queue = await queueJson('lantern-ridge');
    const best = new Map<string, number>();
    for (const r of queue) best.set(r.objectId, Math.max(best.get(r.objectId) ?? -1, r.score));
    const expected = [...best.entries()].sort((a, b) => b[1] - a[1]).map(([id]) => id);
    expect(byClass(await tonight(), 'object-row').map((e) => e.attrs['data-object-id'])).toEqual(expected);
  });

  it('draws the observable windows of the stored assessment, each with the limit that closes it', async () => {
    await setup();
    const root = await tonight();
    for (const o of INVENTED) {
      const windows = planned.get(o.objectId)!.summary.sites.find((s) => s.siteId === 'lantern-ridge')!.windows as { start: string; end: string; closesBecause: string }[];
      const row = byClass(root, 'object-row').find((r) => r.attrs['data-object-id'] === o.objectId)!;
      expect(byClass(row, 'window').map((w) => [w.attrs['data-start'], w.attrs['data-end'], w.attrs['data-closes']])).toEqual(windows.map((w) => [w.start, w.end, w.closesBecause]));
      expect(byClass(row, 'closes')).toHaveLength(windows.length);
    }
  });

  it('draws the altitude from the orbit estimate across the windows when there is one', async () => {
    await setup({ withEstimates: true });
    const rows = byClass(await tonight(), 'object-row');
    expect(rows.map((e) => e.attrs['data-altitude-source'])).toEqual(['estimate', 'estimate', 'estimate']);
    for (const row of rows) expect(byClass(row, 'altitude').length).toBeGreaterThan(0);
  });

  it('answers 404 in the error shape for an unknown site', async () => {
    await setup();
    const res = await app!.inject({ url: '/v1/sites/nowhere/tonight.svg' });
    expect(res.statusCode).toBe(404);
    expect(res.json()).toMatchObject({ error: { code: 'not_found', message: expect.stringContaining('no site nowhere') } });
  });

  it('answers 400 naming the field for a malformed or impossible date', async () => {
    await setup();
    const malformed = await app!.inject({ url: '/v1/sites/lantern-ridge/tonight.svg?date=tomorrow' });
    expect(malformed.statusCode).toBe(400);
    expect(malformed.json().error.details[0].path).toBe('query.date');
    const impossible = await app!.inject({ url: '/v1/sites/lantern-ridge/tonight.svg?date=2027-02-30' });
    expect(impossible.statusCode).toBe(400);
    expect(impossible.json().error.message).toContain('no such calendar date');
  });
});

describe('GET /v1/objects/:id/pointing.svg', () => {
  it('draws the place, the normal regions of the ellipse and the rates of the request table at t when there is no estimate', async () => {
    await setup();
    const request = (await queueJson('lantern-ridge')).find((r) => r.objectId === 'QV27C01')!;
    const row = request.plan.ephemeris.rows[3]!;
    const res = await app!.inject({ url: `/v1/objects/QV27C01/pointing.svg?site=lantern-ridge&t=${row.t}` });
    expect(res.statusCode).toBe(200);
    const root = parseXml(res.body);
    expect(root.attrs['data-position-source']).toBe('request-table');
    expect(Number(root.attrs['data-ra-deg'])).toBe(row.ra);
    expect(Number(root.attrs['data-dec-deg'])).toBe(row.dec);
    expect(Number(root.attrs['data-unc-major-arcsec'])).toBe(row.unc.major);
    expect(Number(byClass(root, 'motion')[0]!.attrs['data-ra-rate'])).toBe(row.raRate);
    expect(byClass(root, 'density')).toHaveLength(0);
    expect(Number(byClass(root, 'region-68')[0]!.attrs['data-major-arcsec'])).toBeCloseTo(row.unc.major * Math.sqrt(-2 * Math.log(0.32)), 6);
  });

  it('states the altitude and airmass the request gives at its recommended start, within 0.05 deg and 0.01', async () => {
    await setup();
    for (const request of await queueJson('lantern-ridge')) {
      const root = parseXml((await app!.inject({ url: `/v1/objects/${request.objectId}/pointing.svg?site=lantern-ridge&t=${request.recommendedStart}` })).body);
      expect(Math.abs(Number(root.attrs['data-alt-deg']) - request.plan.conditionsAtStart.altitudeDeg)).toBeLessThan(0.05);
      expect(Math.abs(Number(root.attrs['data-airmass']) - request.plan.conditionsAtStart.airmass)).toBeLessThan(0.01);
      expect(root.attrs['data-observable']).toBe('true');
    }
  });

  it('draws the estimate’s place and its virtual orbits as density at t when there is an estimate', async () => {
    await setup({ withEstimates: true });
    const t = '2027-03-04T07:12:00Z';
    const root = parseXml((await app!.inject({ url: `/v1/objects/QV27C01/pointing.svg?site=lantern-ridge&t=${t}` })).body);
    const expected = estimates.get('QV27C01')!.ephemeris(lantern.location, [new Date(t)])[0]!;
    expect(root.attrs['data-position-source']).toBe('estimate');
    expect(Number(root.attrs['data-ra-deg'])).toBeCloseTo(expected.ra, 9);
    expect(Number(root.attrs['data-members'])).toBe(40);
    expect(Number(byClass(root, 'density')[0]!.attrs['data-members-total'])).toBe(40);
  });

  it('is drawn by default at the start of the object’s next window at the site, and says so', async () => {
    await setup({ now: '2027-03-04T03:00:00Z' });
    const windows = planned.get('QV27C02')!.summary.sites.find((s) => s.siteId === 'lantern-ridge')!.windows as { start: string }[];
    const root = parseXml((await app!.inject({ url: '/v1/objects/QV27C02/pointing.svg?site=lantern-ridge' })).body);
    expect(root.attrs['data-t']).toBe(windows[0]!.start);
    expect(textOf(root)).toContain('the start of the next window');
  });

  it('says plainly that the object cannot be observed at a daytime t', async () => {
    await setup({ withEstimates: true });
    const root = parseXml((await app!.inject({ url: '/v1/objects/QV27C01/pointing.svg?site=lantern-ridge&t=2027-03-04T20:00:00Z' })).body);
    expect(root.attrs['data-observable']).toBe('false');
    expect(textOf(root)).toContain('NOT OBSERVABLE at 20:00 UTC: the Sun is up');
  });

  it('draws the slit the spectrum request plans, at the site’s slit length', async () => {
    await setup();
    const request = (await queueJson('lantern-ridge')).find((r) => r.objectId === 'QV27C01')!;
    const root = parseXml((await app!.inject({ url: `/v1/objects/QV27C01/pointing.svg?site=lantern-ridge&t=${request.plan.ephemeris.rows[0]!.t}` })).body);
    const slit = byClass(root, 'slit')[0]!;
    expect(Number(slit.attrs['data-length-arcsec'])).toBe(120);
    expect(lantern.spectrograph!.slitWidthsArcsec).toContain(Number(slit.attrs['data-width-arcsec']));
  });

  it('answers 404 for an unknown object or site, 422 for a time no table covers, 400 for a bad time', async () => {
    await setup();
    expect((await app!.inject({ url: '/v1/objects/NOPE/pointing.svg' })).statusCode).toBe(404);
    expect((await app!.inject({ url: '/v1/objects/QV27C01/pointing.svg?site=nowhere' })).json().error.code).toBe('not_found');
    const far = await app!.inject({ url: '/v1/objects/QV27C01/pointing.svg?site=lantern-ridge&t=2027-03-10T00:00:00Z' });
    expect(far.statusCode).toBe(422);
    expect(far.json().error.message).toContain('no orbit estimate is available');
    const bad = await app!.inject({ url: '/v1/objects/QV27C01/pointing.svg?t=yesterday' });
    expect(bad.statusCode).toBe(400);
    expect(bad.json().error.details[0].path).toBe('query.t');
  });
});

describe('which night a picture shows by default', () => {
  // Lantern Ridge, 107.62 W: local mean time is UTC - 7.17 h; on 2027-03-04 the Sun rises near 13:30 UTC.
  it('is the night in progress until its sunrise', () => {
    expect(currentLocalDate(lantern, new Date('2027-03-04T06:00:00Z'))).toBe('2027-03-03');
    expect(currentLocalDate(lantern, new Date('2027-03-04T13:00:00Z'))).toBe('2027-03-03');
  });

  it('is the coming night after sunrise', () => {
    expect(currentLocalDate(lantern, new Date('2027-03-04T15:00:00Z'))).toBe('2027-03-04');
    expect(currentLocalDate(lantern, new Date('2027-03-04T22:00:00Z'))).toBe('2027-03-04');
  });
});
