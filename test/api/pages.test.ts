import { Writable } from 'node:stream';
import type { FastifyInstance } from 'fastify';
import pino from 'pino';
import { afterEach, beforeAll, describe, expect, it } from 'vitest';
import { buildApp } from '../../src/api/app.js';
import { CAUTIONS } from '../../src/api/docs-page.js';
import { MIGRATIONS_DIR } from '../../src/config/load.js';
import type { AssessmentSummary } from '../../src/planning/assess.js';
import type { NewRequest } from '../../src/store/requests.js';
import { INVENTED, INVENTED_FAR_SOUTH, NOW_ISO, inventedEstimate, plannedAssessment, storeAssessed, type RequestJson } from '../views/fixtures.js';
import { DEMO_TOKENS, demoConfig, fixedClock, memoryStore } from '../helpers.js';

const config = demoConfig();
let app: FastifyInstance | null = null;
afterEach(async () => {
  await app?.close();
  app = null;
});

const planned = new Map<string, { requests: NewRequest[]; summary: AssessmentSummary }>();
beforeAll(() => {
  for (const o of [...INVENTED, INVENTED_FAR_SOUTH]) planned.set(o.objectId, plannedAssessment(inventedEstimate(o), config.sites));
});

async function setup(options: { log?: string[] } = {}) {
  const clock = fixedClock(NOW_ISO);
  const store = memoryStore(clock);
  storeAssessed(store, planned, { sender: 'Invented Survey (test)', receivedAt: '2027-03-04T05:00:00.000Z', assessedAt: '2027-03-04T05:30:00.000Z' });
  const logger = options.log
    ? pino({ level: 'info' }, new Writable({ write: (chunk: Buffer, _enc, done) => (options.log!.push(chunk.toString()), done()) }))
    : undefined;
  app = await buildApp({ config, store, clock, migrationsDir: MIGRATIONS_DIR, ...(logger ? { logger } : {}) });
  return { app, store };
}

const scheduler = { authorization: `Bearer ${DEMO_TOKENS.scheduler}` };
const REMOTE = '10.1.2.3';

/** The queue table's rows on the review page: each cell's text by request id. */
function queueTable(html: string): Map<string, string[]> {
  const rows = new Map<string, string[]>();
  for (const m of html.matchAll(/<tr class="state-[a-z]+" data-request-id="([^"]+)">([\s\S]*?)<\/tr>/g)) {
    rows.set(m[1]!, [...m[2]!.matchAll(/<td[^>]*>([\s\S]*?)<\/td>/g)].map((c) => c[1]!.replace(/<[^>]+>/g, '')));
  }
  return rows;
}

describe('GET / (the review page)', () => {
  it('lists both sites with tonight’s timeline, cautions and links, and needs no script', async () => {
    await setup();
    const res = await app!.inject({ url: '/' });
    expect(res.statusCode).toBe(200);
    expect(res.headers['content-type']).toBe('text/html; charset=utf-8');
    for (const site of config.sites) {
      expect(res.body).toContain(site.name);
      expect(res.body).toContain(`<img src="/v1/sites/${site.id}/tonight.svg?date=`);
    }
    expect(res.body).toContain('Cautions');
    expect(res.body).toContain(CAUTIONS[1]!.slice(0, 40));
    expect(res.body).not.toMatch(/<script/i);
  });

  it('shows per request the target RA/Dec, altitude and airmass at start, duration, 1-sigma major axis and score of the queue JSON', async () => {
    await setup();
    const html = (await app!.inject({ url: '/' })).body;
    const table = queueTable(html);
    const queue = (await app!.inject({ url: '/v1/queue?site=lantern-ridge&from=2027-03-04T00:00:00Z&to=2027-03-05T00:00:00Z&limit=500', headers: scheduler })).json().items as RequestJson[];
    expect(queue.length).toBeGreaterThan(0);
    for (const r of queue) {
      const cells = table.get(r.id)!;
      const [, , score, start, duration, , ra, dec, alt, airmass, major] = cells;
      expect(Number(score)).toBeCloseTo(r.score, 1);
      expect(start).toBe(`${r.recommendedStart.slice(0, 10)} ${r.recommendedStart.slice(11, 16)}`);
      const minutes = r.plan.expectedDurationS / 60;
      expect(duration).toBe(minutes >= 90 ? `${Number((minutes / 60).toFixed(1))} h` : `${Math.max(1, Math.round(minutes))} min`);
      // RA h m s to 0.1 s, Dec d m s to 1 arcsec, from the request's target.
      const [h, m, s] = ra!.split(' ').map(Number) as [number, number, number];
      expect(Math.abs((h + m / 60 + s / 3600) * 15 - r.plan.target.raDeg)).toBeLessThan(0.1 / 240 + 1e-9);
      const sign = dec!.startsWith('−') ? -1 : 1;
      const [d, dm, ds] = dec!.slice(1).split(' ').map(Number) as [number, number, number];
      expect(Math.abs(sign * (d + dm / 60 + ds / 3600) - r.plan.target.decDeg)).toBeLessThan(1 / 3600);
      expect(Number(alt)).toBeCloseTo(r.plan.conditionsAtStart.altitudeDeg, 1);
      expect(Number(airmass)).toBeCloseTo(r.plan.conditionsAtStart.airmass, 2);
      expect(Number(major)).toBeCloseTo(r.plan.target.uncertainty1Sigma!.majorArcsec, 1);
    }
  });

  it('links each object to its own page, not to JSON', async () => {
    await setup();
    const html = (await app!.inject({ url: '/' })).body;
    for (const o of INVENTED) expect(html).toContain(`<a href="/objects/${o.objectId}">${o.objectId}</a>`);
    expect(html).not.toMatch(/<a href="\/v1\/objects\/QV27C0\d">/);
  });

  it('lists the objects without a request at a site with the planner’s reasons', async () => {
    await setup();
    const html = (await app!.inject({ url: '/' })).body;
    const section = html.slice(html.indexOf('<h3>Without a request at Lantern Ridge'));
    expect(section).toContain('<a href="/objects/QV27C09">QV27C09</a>');
    expect(section).toContain('declination outside -35..89 deg throughout the night');
  });

  it('is open on loopback and needs a reader token from elsewhere', async () => {
    await setup();
    expect((await app!.inject({ url: '/', remoteAddress: REMOTE })).statusCode).toBe(401);
    expect((await app!.inject({ url: '/', remoteAddress: REMOTE, headers: { authorization: `Bearer ${DEMO_TOKENS.reader}` } })).statusCode).toBe(200);
    expect((await app!.inject({ url: '/v1/sites/lantern-ridge/tonight.svg', remoteAddress: REMOTE, headers: { authorization: `Bearer ${DEMO_TOKENS.feeder}` } })).statusCode).toBe(403);
  });

  it('reached with ?token= from elsewhere, passes the token on to its pictures and links, which then answer', async () => {
    await setup();
    const res = await app!.inject({ url: `/?token=${DEMO_TOKENS.reader}`, remoteAddress: REMOTE });
    expect(res.statusCode).toBe(200);
    expect(res.headers['referrer-policy']).toBe('no-referrer');
    const targets = [...res.body.matchAll(/(?:src|href)="(\/[^"]*)"/g)].map((m) => m[1]!.replace(/&amp;/g, '&')).filter((u) => !u.startsWith('/v1/docs') && !u.startsWith('/v1/openapi'));
    const pictures = targets.filter((u) => u.includes('.svg'));
    expect(pictures.length).toBeGreaterThan(4);
    for (const url of targets) expect(url, url).toContain(`token=${DEMO_TOKENS.reader}`);
    for (const url of pictures) expect((await app!.inject({ url, remoteAddress: REMOTE })).statusCode, url).toBe(200);
    const objectPage = targets.find((u) => u.startsWith('/objects/'))!;
    expect((await app!.inject({ url: objectPage, remoteAddress: REMOTE })).statusCode).toBe(200);
  });

  it('refuses an unknown token in the address, and a token in the address for the JSON routes', async () => {
    await setup();
    expect((await app!.inject({ url: '/?token=wrong', remoteAddress: REMOTE })).statusCode).toBe(401);
    const json = await app!.inject({ url: `/v1/objects?token=${DEMO_TOKENS.reader}`, remoteAddress: REMOTE });
    expect(json.statusCode).toBe(401);
    expect(json.json().error.message).toContain('taken only by the review pages and pictures');
  });

  it('keeps a token given in the address out of the request log', async () => {
    const log: string[] = [];
    await setup({ log });
    expect((await app!.inject({ url: `/v1/sites/lantern-ridge/tonight.svg?date=2027-03-03&token=${DEMO_TOKENS.reader}`, remoteAddress: REMOTE })).statusCode).toBe(200);
    expect(log.join('')).toContain('/v1/sites/lantern-ridge/tonight.svg?date=2027-03-03');
    expect(log.join('')).not.toContain(DEMO_TOKENS.reader);
  });
});

describe('GET /objects/:id (a page per object)', () => {
  it('summarises the estimate: range, orbit classes, H and size, close approach', async () => {
    await setup();
    const res = await app!.inject({ url: '/objects/QV27C01' });
    expect(res.statusCode).toBe(200);
    expect(res.headers['content-type']).toBe('text/html; charset=utf-8');
    const e = planned.get('QV27C01')!.summary.estimate;
    const html = res.body;
    expect(html).toContain(`${e.rangeAu.p50.toFixed(4).replace(/0+$/, '').replace(/\.$/, '')} au`);
    expect(html).toContain(`${Math.round(e.classFractions.nearEarth * 100)} % near-Earth (q &lt; 1.3 au)`);
    expect(html).toContain('Absolute magnitude H');
    expect(html).toContain(`${Math.round(e.diameterM!.min)}–${Math.round(e.diameterM!.max)} m across`);
    expect(html).toContain('Closest approach');
    expect(html).not.toMatch(/<script/i);
  });

  it('shows every site’s requests with their history, and where to point from each', async () => {
    await setup();
    const html = (await app!.inject({ url: '/objects/QV27C01' })).body;
    for (const r of planned.get('QV27C01')!.requests) expect(html).toContain(r.recommendedStart.slice(11, 16));
    expect(html).toMatch(/history \(1\)/);
    expect(html).toContain('new → queued');
    for (const site of config.sites) expect(html).toContain(`<img src="/v1/objects/QV27C01/pointing.svg?site=${site.id}"`);
  });

  it('shows a request revised in place by a replan with its revision and what changed', async () => {
    const { store } = await setup();
    const later = new Date(Date.parse(NOW_ISO) + 20 * 60_000);
    const replan = plannedAssessment(inventedEstimate(INVENTED[0]!, { at: later }), config.sites, later);
    const saved = store.requests.saveAssessment({ objectId: INVENTED[0]!.objectId, createdAt: later.toISOString(), observations: 4, summary: replan.summary, requests: replan.requests });
    expect(saved.revised.length).toBeGreaterThan(0);
    const html = (await app!.inject({ url: `/objects/${INVENTED[0]!.objectId}` })).body;
    expect(html).toContain('(revision 2)');
    expect(html).toMatch(/revision 2: changed [a-zA-Z]/);
  });

  it('gives the reasons for sites with no request', async () => {
    await setup();
    const html = (await app!.inject({ url: '/objects/QV27C09' })).body;
    expect(html).toContain('No requests at this site.');
    expect(html).toContain('declination outside -35..89 deg throughout the night');
    expect(html).toContain('No pointing picture from here');
  });

  it('answers 404 for an unknown object', async () => {
    await setup();
    expect((await app!.inject({ url: '/objects/NOPE' })).statusCode).toBe(404);
  });
});
