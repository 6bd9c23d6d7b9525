import { afterEach, describe, expect, it } from 'vitest';
import type { FastifyInstance } from 'fastify';
import { buildApp } from '../../src/api/app.js';
import { withFailures } from '../../src/api/on-demand.js';
import { elementsFromNoticeOrbit } from '../../src/commands/ephemeris.js';
import { MIGRATIONS_DIR } from '../../src/config/load.js';
import { createIntake } from '../../src/intake/ingest.js';
import { classifyOnDemandFailure, createOnDemandEstimates, OnDemandFailure, type WorkerEstimates } from '../../src/jobs/on-demand-estimates.js';
import type { NoticeOrbit } from '../../src/intake/notice.js';
import { ephemerisFromElements } from '../../src/orbit/ephemeris.js';
import { simulateNight } from '../../src/planning/simulate.js';
import { demoConfig, memoryStore } from '../helpers.js';

const NOW = new Date('2027-03-04T06:00:00Z');
let app: FastifyInstance | null = null;
let estimates: WorkerEstimates | null = null;
afterEach(async () => {
  await app?.close();
  await estimates?.close();
  app = null;
  estimates = null;
});

/** The app with the service's own on-demand path: estimates run in a worker thread. */
async function startApp(store: ReturnType<typeof memoryStore>, members: number): Promise<void> {
  const clock = () => NOW;
  estimates = createOnDemandEstimates({ store, members, clock, timeLimitMs: 60_000, waitMs: 30_000, heapMb: 1024 });
  app = await buildApp({ config: demoConfig(), store, clock, migrationsDir: MIGRATIONS_DIR, onDemand: withFailures(estimates, classifyOnDemandFailure) });
}

async function setup(withOrbit: boolean) {
  const clock = () => NOW;
  const store = memoryStore(clock);
  const config = demoConfig();
  const [sim] = simulateNight({ now: NOW, count: 1, seed: 4, withOrbit: true });
  const notice = { ...sim!.notice };
  const orbit = notice['orbit'] as NoticeOrbit;
  if (!withOrbit) delete notice['orbit'];
  createIntake({ notices: store.notices, clock, futureToleranceMin: 5 }).ingestJson(JSON.stringify(notice), 'test');
  await startApp(store, 1000);
  return { objectId: String(notice['objectId']), orbit, site: config.sites[0]! };
}

function separationArcsec(ra1: number, dec1: number, ra2: number, dec2: number): number {
  const r = Math.PI / 180;
  const c = Math.sin(dec1 * r) * Math.sin(dec2 * r) + Math.cos(dec1 * r) * Math.cos(dec2 * r) * Math.cos((ra1 - ra2) * r);
  return (Math.acos(Math.min(1, c)) / r) * 3600;
}

describe('GET /v1/objects/{id}/ephemeris', () => {
  it('follows the orbit block it was given, within 1 arcsec of a direct propagation of the elements', async () => {
    const { objectId, orbit, site } = await setup(true);
    const res = await app!.inject({ url: `/v1/objects/${objectId}/ephemeris?site=${site.id}&start=2027-03-04T08:00:00Z&end=2027-03-04T12:00:00Z&step=60` });
    expect(res.statusCode).toBe(200);
    const rows = res.json().rows as { t: string; ra: number; dec: number; unc: unknown }[];
    expect(rows).toHaveLength(5);
    const { elements, epochTt } = elementsFromNoticeOrbit(orbit);
    const direct = ephemerisFromElements(elements, epochTt, site.location, rows.map((r) => new Date(r.t)));
    rows.forEach((r, k) => expect(separationArcsec(r.ra, r.dec, direct[k]!.ra, direct[k]!.dec)).toBeLessThan(1));
  });

  it('gives a tracklet-only object an uncertainty ellipse that holds the true position', async () => {
    const { objectId, orbit, site } = await setup(false);
    const res = await app!.inject({ url: `/v1/objects/${objectId}/ephemeris?site=${site.id}&start=2027-03-04T09:00:00Z&end=2027-03-04T09:00:00Z` });
    const [row] = res.json().rows as { t: string; ra: number; dec: number; unc: { major: number; minor: number } }[];
    expect(res.json().method).toBe('ranging');
    expect(row!.unc.major).toBeGreaterThan(0);
    const { elements, epochTt } = elementsFromNoticeOrbit(orbit);
    const [truth] = ephemerisFromElements(elements, epochTt, site.location, [new Date(row!.t)]);
    // The truth lies within the 3-sigma extent along the major axis.
    expect(separationArcsec(row!.ra, row!.dec, truth!.ra, truth!.dec)).toBeLessThan(3 * row!.unc.major);
  });

  it('answers 422 with the estimator\'s reason when the stored tracklet cannot be estimated', async () => {
    const clock = () => NOW;
    const store = memoryStore(clock);
    // Three positions ten minutes apart at one place: the notice is valid, the estimator finds no motion to fit.
    const notice = {
      format: 'nightjar.notice.v1',
      noticeId: 'motionless',
      sender: 'Example Survey (invented)',
      issuedAt: '2027-03-04T05:00:00Z',
      objectId: 'ZX27Q99',
      observer: { lat: 34.21, lon: -107.62, height: 2310 },
      observations: [
        { t: '2027-03-04T04:00:00Z', ra: 150.1, dec: 10.2, sigma: 0.5 },
        { t: '2027-03-04T04:10:00Z', ra: 150.1, dec: 10.2, sigma: 0.5 },
        { t: '2027-03-04T04:20:00Z', ra: 150.1, dec: 10.2, sigma: 0.5 },
      ],
    };
    const ingested = createIntake({ notices: store.notices, clock, futureToleranceMin: 5 }).ingestJson(JSON.stringify(notice), 'test');
    await startApp(store, 200);
    const res = await app!.inject({ url: `/v1/objects/ZX27Q99/ephemeris?site=lantern-ridge` });
    expect(ingested.map((r) => r.status)).toEqual(['accepted']);
    expect(res.statusCode).toBe(422);
    expect(res.json().error.message).toMatch(/cannot be estimated/);
  });

  it('counts refusals, time-outs and crashes as 422 and a busy worker as 503, but not a fault inside the worker', () => {
    expect(classifyOnDemandFailure(new OnDemandFailure({ kind: 'refused', message: 'observations = 3: no motion' }))).toEqual({ kind: 'refused', message: 'observations = 3: no motion' });
    expect(classifyOnDemandFailure(new OnDemandFailure({ kind: 'timeout', message: 'over 20 s', limitMs: 20_000 }))?.kind).toBe('refused');
    expect(classifyOnDemandFailure(new OnDemandFailure({ kind: 'crashed', message: 'out of memory' }))?.kind).toBe('refused');
    expect(classifyOnDemandFailure(new OnDemandFailure({ kind: 'busy', message: 'busy', retryAfterS: 2 }))).toEqual({ kind: 'busy', message: 'busy', retryAfterS: 2 });
    expect(classifyOnDemandFailure(new OnDemandFailure({ kind: 'error', message: 'x is undefined' }))).toBeNull();
    expect(classifyOnDemandFailure(new Error('x is undefined'))).toBeNull();
  });

  it('names an unknown site and refuses a table that is too long', async () => {
    const { objectId } = await setup(true);
    expect((await app!.inject({ url: `/v1/objects/${objectId}/ephemeris?site=nowhere` })).statusCode).toBe(404);
    const long = await app!.inject({ url: `/v1/objects/${objectId}/ephemeris?site=lantern-ridge&start=2027-03-04T00:00:00Z&end=2027-03-10T00:00:00Z&step=1` });
    expect(long.statusCode).toBe(400);
    expect(long.json().error.details[0].path).toBe('query.step');
  });
});
