import type { FastifyInstance } from 'fastify';
import { afterEach, beforeAll, describe, expect, it } from 'vitest';
import { buildApp } from '../../src/api/app.js';
import { CAUTIONS } from '../../src/api/docs-page.js';
import { currentLocalDate } from '../../src/api/routes/pictures.js';
import { MIGRATIONS_DIR } from '../../src/config/load.js';
import type { ObjectEstimate } from '../../src/orbit/estimate-types.js';
import type { NewRequest } from '../../src/store/requests.js';
import { byClass, parseXml, textOf } from '../views/xml.js';
import { INVENTED, NOW_ISO, inventedEstimate, plannedRequests } from '../views/fixtures.js';
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
const planned = new Map<string, NewRequest[]>();
beforeAll(() => {
  INVENTED.forEach((o, i) => {
    const estimate = inventedEstimate(o, { members: i === 0 });
    estimates.set(o.objectId, estimate);
    planned.set(o.objectId, plannedRequests(estimate, config.sites));
  });
});

async function setup(options: { withEstimates?: boolean } = {}) {
  const clock = fixedClock(NOW_ISO);
  const store = memoryStore(clock);
  for (const o of INVENTED) {
    store.notices.recordNotice({
      sender: 'Invented Survey (test)',
      noticeId: `n-${o.objectId}`,
      objectId: o.objectId,
      source: 'test',
      receivedAt: '2027-03-04T05:00:00.000Z',
      issuedAt: '2027-03-04T05:00:00.000Z',
      raw: '{}',
      kind: 'observations',
      retractionReason: null,
      orbitJson: null,
      observations: [],
    });
    store.requests.saveAssessment({ objectId: o.objectId, createdAt: '2027-03-04T05:30:00.000Z', observations: 3, summary: {}, requests: planned.get(o.objectId)! });
  }
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

interface QueueItem {
  id: string;
  objectId: string;
  kind: string;
  score: number;
  window: { start: string; end: string };
  plan: { ephemeris: { rows: { t: string; ra: number; dec: number; raRate: number; decRate: number; unc: { major: number; minor: number; pa: number } }[] } };
}

async function queueJson(site: string): Promise<QueueItem[]> {
  const res = await app!.inject({ url: `/v1/queue?site=${site}&from=2027-03-04T00:00:00Z&to=2027-03-05T00:00:00Z&limit=500`, headers: scheduler });
  expect(res.statusCode).toBe(200);
  return (res.json() as { items: QueueItem[] }).items;
}

describe('GET /v1/sites/:id/night.svg', () => {
  it('answers an SVG document that parses as XML', async () => {
    await setup();
    const res = await app!.inject({ url: '/v1/sites/lantern-ridge/night.svg?date=2027-03-03' });
    expect(res.statusCode).toBe(200);
    expect(res.headers['content-type']).toBe('image/svg+xml; charset=utf-8');
    expect(parseXml(res.body).name).toBe('svg');
  });

  it('draws one curve per object with queued or leased requests at the site, leased ones included', async () => {
    await setup();
    const queue = await queueJson('lantern-ridge');
    const leased = queue.find((r) => r.objectId === 'QV27C02')!;
    const lease = await app!.inject({ method: 'POST', url: `/v1/requests/${leased.id}/lease`, headers: scheduler, payload: { holder: 'queue-a', seconds: 600 } });
    expect(lease.statusCode).toBe(200);
    const root = parseXml((await app!.inject({ url: '/v1/sites/lantern-ridge/night.svg?date=2027-03-03' })).body);
    const curves = byClass(root, 'object-curve').map((e) => e.attrs['data-object-id']);
    expect([...curves].sort()).toEqual([...new Set(queue.map((r) => r.objectId))].sort());
    expect(byClass(root, 'request-window').find((e) => e.attrs['data-request-id'] === leased.id)!.attrs['data-state']).toBe('leased');
  });

  it('draws each request window with the score and window of the queue JSON', async () => {
    await setup();
    const queue = await queueJson('lantern-ridge');
    const root = parseXml((await app!.inject({ url: '/v1/sites/lantern-ridge/night.svg?date=2027-03-03' })).body);
    const drawn = new Map(byClass(root, 'request-window').map((e) => [e.attrs['data-request-id'], e]));
    expect(drawn.size).toBe(queue.length);
    for (const r of queue) {
      const bar = drawn.get(r.id)!;
      expect(Number(bar.attrs['data-score'])).toBeCloseTo(r.score, 3);
      expect(bar.attrs['data-start']).toBe(r.window.start);
      expect(bar.attrs['data-end']).toBe(r.window.end);
    }
  });

  it('draws the curves from the orbit estimate over the whole night when there is one', async () => {
    await setup({ withEstimates: true });
    const root = parseXml((await app!.inject({ url: '/v1/sites/lantern-ridge/night.svg?date=2027-03-03' })).body);
    expect(byClass(root, 'object-curve').map((e) => e.attrs['data-source'])).toEqual(['estimate', 'estimate', 'estimate']);
    expect(byClass(root, 'altitude-limit')).toHaveLength(1);
  });

  it('answers 404 in the error shape for an unknown site', async () => {
    await setup();
    const res = await app!.inject({ url: '/v1/sites/nowhere/night.svg' });
    expect(res.statusCode).toBe(404);
    expect(res.json()).toMatchObject({ error: { code: 'not_found', message: expect.stringContaining('no site nowhere') } });
  });

  it('answers 400 naming the field for a malformed or impossible date', async () => {
    await setup();
    const malformed = await app!.inject({ url: '/v1/sites/lantern-ridge/night.svg?date=tomorrow' });
    expect(malformed.statusCode).toBe(400);
    expect(malformed.json().error.details[0].path).toBe('query.date');
    const impossible = await app!.inject({ url: '/v1/sites/lantern-ridge/night.svg?date=2027-02-30' });
    expect(impossible.statusCode).toBe(400);
    expect(impossible.json().error.message).toContain('no such calendar date');
  });
});

describe('GET /v1/objects/:id/sky.svg', () => {
  it('draws the ellipses with the unc of the request ephemeris at t when there is no estimate', async () => {
    await setup();
    const request = (await queueJson('lantern-ridge')).find((r) => r.objectId === 'QV27C01')!;
    const json = (await app!.inject({ url: `/v1/requests/${request.id}`, headers: scheduler })).json() as { plan: QueueItem['plan'] };
    const row = json.plan.ephemeris.rows[3]!;
    const res = await app!.inject({ url: `/v1/objects/QV27C01/sky.svg?site=lantern-ridge&t=${row.t}` });
    expect(res.statusCode).toBe(200);
    const root = parseXml(res.body);
    expect(root.attrs['data-position-source']).toBe('request-table');
    expect(Number(root.attrs['data-ra-deg'])).toBeCloseTo(row.ra, 9);
    expect(Number(root.attrs['data-dec-deg'])).toBeCloseTo(row.dec, 9);
    const one = byClass(root, 'sigma-1')[0]!;
    expect(Number(one.attrs['data-major-arcsec'])).toBeCloseTo(row.unc.major, 6);
    expect(Number(one.attrs['data-minor-arcsec'])).toBeCloseTo(row.unc.minor, 6);
    expect(Number(one.attrs['data-pa-deg'])).toBeCloseTo(row.unc.pa, 6);
    expect(Number(byClass(root, 'sigma-3')[0]!.attrs['data-major-arcsec'])).toBeCloseTo(3 * row.unc.major, 5);
    expect(Number(byClass(root, 'motion')[0]!.attrs['data-ra-rate'])).toBeCloseTo(row.raRate, 9);
    expect(textOf(root)).toContain('Virtual-orbit points are not available');
  });

  it('draws the estimate’s place, ellipse and virtual orbits at t when there is an estimate', async () => {
    await setup({ withEstimates: true });
    const t = '2027-03-04T07:12:00Z';
    const root = parseXml((await app!.inject({ url: `/v1/objects/QV27C01/sky.svg?site=lantern-ridge&t=${t}` })).body);
    const expected = estimates.get('QV27C01')!.ephemeris(lantern.location, [new Date(t)])[0]!;
    expect(root.attrs['data-position-source']).toBe('estimate');
    expect(Number(root.attrs['data-ra-deg'])).toBeCloseTo(expected.ra, 9);
    expect(Number(byClass(root, 'sigma-1')[0]!.attrs['data-major-arcsec'])).toBeCloseTo(expected.unc!.major, 6);
    expect(Number(byClass(root, 'members')[0]!.attrs['data-count'])).toBe(40);
  });

  it('draws the slit the spectrum request plans, at the site’s slit length', async () => {
    await setup();
    const request = (await queueJson('lantern-ridge')).find((r) => r.objectId === 'QV27C01')!;
    const root = parseXml((await app!.inject({ url: `/v1/objects/QV27C01/sky.svg?site=lantern-ridge&t=${request.plan.ephemeris.rows[0]!.t}` })).body);
    const slit = byClass(root, 'slit')[0]!;
    expect(Number(slit.attrs['data-length-arcsec'])).toBe(120);
    expect(lantern.spectrograph!.slitWidthsArcsec).toContain(Number(slit.attrs['data-width-arcsec']));
  });

  it('answers 404 for an unknown object or site, 422 for a time no table covers, 400 for a bad time', async () => {
    await setup();
    expect((await app!.inject({ url: '/v1/objects/NOPE/sky.svg' })).statusCode).toBe(404);
    expect((await app!.inject({ url: '/v1/objects/QV27C01/sky.svg?site=nowhere' })).json().error.code).toBe('not_found');
    const far = await app!.inject({ url: '/v1/objects/QV27C01/sky.svg?site=lantern-ridge&t=2027-03-10T00:00:00Z' });
    expect(far.statusCode).toBe(422);
    expect(far.json().error.message).toContain('no orbit estimate is available');
    const bad = await app!.inject({ url: '/v1/objects/QV27C01/sky.svg?t=yesterday' });
    expect(bad.statusCode).toBe(400);
    expect(bad.json().error.details[0].path).toBe('query.t');
  });
});

describe('GET /', () => {
  it('lists both sites with their queues, cautions and links, and needs no script', async () => {
    await setup();
    const res = await app!.inject({ url: '/' });
    expect(res.statusCode).toBe(200);
    expect(res.headers['content-type']).toBe('text/html; charset=utf-8');
    for (const site of config.sites) {
      expect(res.body).toContain(site.name);
      expect(res.body).toContain(`/v1/sites/${site.id}/night.svg?date=`);
      expect(res.body).toContain(`/v1/queue?site=${site.id}`);
    }
    for (const r of await queueJson('lantern-ridge')) expect(res.body).toContain(`/v1/requests/${r.id}`);
    expect(res.body).toContain('/v1/objects/QV27C01/sky.svg?site=lantern-ridge');
    expect(res.body).toContain('Cautions');
    expect(res.body).toContain(CAUTIONS[1]!.slice(0, 40));
    expect(res.body).not.toMatch(/<script/i);
  });

  it('links pictures that the service answers', async () => {
    await setup();
    const html = (await app!.inject({ url: '/' })).body;
    const sources = [...html.matchAll(/<img src="([^"]+)"/g)].map((m) => m[1]!.replace(/&amp;/g, '&'));
    expect(sources.length).toBe(4);
    for (const src of sources) {
      const res = await app!.inject({ url: src });
      expect(res.statusCode, src).toBe(200);
      expect(parseXml(res.body).name).toBe('svg');
    }
  });

  it('is open on loopback, needs a reader token from elsewhere', async () => {
    await setup();
    expect((await app!.inject({ url: '/', remoteAddress: '10.1.2.3' })).statusCode).toBe(401);
    expect((await app!.inject({ url: '/', remoteAddress: '10.1.2.3', headers: { authorization: `Bearer ${DEMO_TOKENS.reader}` } })).statusCode).toBe(200);
    expect((await app!.inject({ url: '/v1/sites/lantern-ridge/night.svg', remoteAddress: '10.1.2.3', headers: { authorization: `Bearer ${DEMO_TOKENS.feeder}` } })).statusCode).toBe(403);
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
