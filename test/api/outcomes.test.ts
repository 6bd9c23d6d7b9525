import { Body, Equator, Horizon, Observer } from 'astronomy-engine';
import { afterEach, describe, expect, it } from 'vitest';
import type { FastifyInstance } from 'fastify';
import type { NewRequest } from '../../src/store/requests.js';
import type { Store } from '../../src/store/index.js';
import { buildTestApp, DEMO_TOKENS, examplePlan } from '../helpers.js';

// Lantern Ridge (invented demo site): 34.21 N, 107.62 W, 2310 m; night Sun limit -12 deg.
const T0 = Date.parse('2027-03-04T06:00:00Z');
const clockAt = { t: T0 };
const clock = () => new Date(clockAt.t);
const at = (minutes: number) => new Date(T0 + minutes * 60_000).toISOString();
const scheduler = { authorization: `Bearer ${DEMO_TOKENS.scheduler}` };
const operator = { authorization: `Bearer ${DEMO_TOKENS.operator}` };

let app: FastifyInstance | null = null;
afterEach(async () => {
  await app?.close();
  app = null;
  clockAt.t = T0;
});

/** A table as the planner writes it: a fixed place (RA 151.3, Dec -12.33) every 5 min with a 2" x 1" 1-sigma ellipse. */
function tableRows(fromMin: number, toMin: number) {
  const rows = [];
  for (let m = fromMin; m <= toMin; m += 5) rows.push({ t: at(m), ra: 151.3, dec: -12.33, raRate: 0, decRate: 0, unc: { major: 2, minor: 1, pa: 0 }, mag: 19.4, alt: 40, airmass: 1.55 });
  return rows;
}

function proposal(fromMin = 10, toMin = 200): NewRequest {
  return {
    siteId: 'lantern-ridge',
    kind: 'photometry',
    score: 60,
    windowStart: at(fromMin),
    windowEnd: at(toMin),
    recommendedStart: at(fromMin),
    expiresAt: at(toMin),
    body: examplePlan({ windowStartUtc: at(fromMin), windowEndUtc: at(toMin), recommendedStartUtc: at(fromMin), expiresAtUtc: at(toMin), ephemeris: { rows: tableRows(fromMin, toMin) } }),
  };
}

function seed(store: Store, request: NewRequest): string {
  store.notices.recordNotice({
    sender: 'Example Survey (invented)', noticeId: 'seed', objectId: 'ZX27A01', source: 'test', receivedAt: at(-30), issuedAt: at(-30), raw: '{}',
    kind: 'observations', retractionReason: null, orbitJson: null,
    observations: [
      { t: at(-50), raDeg: 151.28, decDeg: -12.331, sigmaArcsec: 0.5, mag: 19.4, band: 'V', obsLatDeg: 19.5, obsLonDeg: -155.2, obsHeightM: 3000 },
      { t: at(-30), raDeg: 151.29, decDeg: -12.3305, sigmaArcsec: 0.5, mag: 19.4, band: 'V', obsLatDeg: 19.5, obsLonDeg: -155.2, obsHeightM: 3000 },
    ],
  });
  return store.requests.saveAssessment({ objectId: 'ZX27A01', createdAt: at(0), observations: 2, summary: {}, requests: [request] }).created[0]!;
}

async function setup(request = proposal(), leaseAtMin = 0) {
  const built = await buildTestApp({ clock });
  app = built.app;
  const id = seed(built.store, request);
  clockAt.t = T0 + leaseAtMin * 60_000;
  const token = (await app.inject({ method: 'POST', url: `/v1/requests/${id}/lease`, headers: scheduler, payload: { holder: 'queue-a', seconds: 6 * 3600 } })).json().leaseToken as string;
  return { ...built, id, token };
}

const report = (id: string, payload: Record<string, unknown>) => app!.inject({ method: 'POST', url: `/v1/requests/${id}/outcome`, headers: scheduler, payload });

describe('an outcome is checked before it is believed', () => {
  it('refuses an observedAt in the future with 422 naming the field, and leaves the request as it was', async () => {
    const { id, token, store } = await setup();
    clockAt.t = T0 + 30 * 60_000;
    const before = store.requests.get(id);
    const res = await report(id, { leaseToken: token, result: 'done', observedAt: '2031-03-04T06:30:00Z' });
    expect(res.statusCode).toBe(422);
    expect(res.json().error).toMatchObject({ code: 'outcome_refused', details: [{ path: 'body.observedAt' }] });
    expect(res.json().error.details[0].message).toMatch(/^2031-03-04T06:30:00Z is in the future/);
    expect(store.requests.get(id)).toEqual(before);
    expect(store.requests.history(id).map((h) => h.toState)).toEqual(['queued', 'leased']);
  });

  it('refuses a done reported in daylight at the site, by its own night limit', async () => {
    // A window from 19:00 to 21:00 UTC, about 11:50 to 13:50 local mean time at 107.62 W.
    const { id, token } = await setup(proposal(13 * 60, 15 * 60), 13 * 60 + 30);
    clockAt.t = T0 + (14 * 60 + 20) * 60_000;
    const observedAt = at(14 * 60 + 10);
    const res = await report(id, { leaseToken: token, result: 'done', observedAt });
    expect(res.statusCode).toBe(422);
    const [issue] = res.json().error.details as { path: string; message: string }[];
    expect(issue!.path).toBe('body.observedAt');
    // Independently: astronomy-engine's Sun altitude (geometric) at the site then.
    const observer = new Observer(34.21, -107.62, 2310);
    const eq = Equator(Body.Sun, new Date(observedAt), observer, true, true);
    const alt = Horizon(new Date(observedAt), observer, eq.ra, eq.dec).altitude;
    expect(alt).toBeGreaterThan(40);
    expect(issue!.message).toContain(`the Sun was ${alt.toFixed(1)} deg high at lantern-ridge, not below the site's night limit -12 deg`);
  });

  it('refuses an observedAt before the lease began (5 min allowed)', async () => {
    const { id, token } = await setup(proposal(), 30);
    clockAt.t = T0 + 40 * 60_000;
    const res = await report(id, { leaseToken: token, result: 'done', observedAt: at(20) });
    expect(res.statusCode).toBe(422);
    expect(res.json().error.details).toEqual([{ path: 'body.observedAt', message: `${at(20)} is before the lease began at ${at(30)} (5 min allowed)` }]);
  });

  it("refuses an observedAt far outside the request's window (15 min allowed either side)", async () => {
    const { id, token } = await setup(proposal(10, 100), 0);
    clockAt.t = T0 + 130 * 60_000;
    const res = await report(id, { leaseToken: token, result: 'failed', observedAt: at(125) });
    expect(res.statusCode).toBe(422);
    expect(res.json().error.details[0].message).toContain(`outside the request's window ${at(10)} to ${at(100)}`);
    expect((await report(id, { leaseToken: token, result: 'failed', observedAt: at(110) })).statusCode).toBe(200);
  });

  it("refuses an outcome naming another site than the request's", async () => {
    const { id, token } = await setup();
    clockAt.t = T0 + 30 * 60_000;
    const res = await report(id, { leaseToken: token, result: 'done', observedAt: at(25), site: 'kestrel-hollow' });
    expect(res.json().error.details).toEqual([{ path: 'body.site', message: 'the request is for site lantern-ridge, not kestrel-hollow' }]);
  });

  it('refuses a position taken before the lease, naming it by index', async () => {
    const { id, token } = await setup(proposal(), 20);
    clockAt.t = T0 + 40 * 60_000;
    const positions = [{ t: at(5), ra: 151.3, dec: -12.33, sigma: 0.3 }];
    const res = await report(id, { leaseToken: token, result: 'done', observedAt: at(35), positions });
    expect(res.json().error.details.map((d: { path: string }) => d.path)).toEqual(['body.positions[0].t']);
  });
});

describe('follow-up positions', () => {
  it('takes one position inside the predicted region into the tracklet and replans the object', async () => {
    const { id, token, store } = await setup();
    clockAt.t = T0 + 30 * 60_000;
    const res = await report(id, { leaseToken: token, result: 'done', observedAt: at(25), positions: [{ t: at(22), ra: 151.3 + 1 / 3600, dec: -12.33, sigma: 0.3, mag: 19.3, band: 'R' }] });
    expect(res.statusCode).toBe(200);
    // 1 arcsec east at Dec -12.33 is 0.977 arcsec on the sky; across a 1" minor axis (pa 0) with 0.3" sigma: 0.977 / sqrt(1.09) = 0.94 sigma.
    expect(res.json().positions[0]).toMatchObject({ held: false, sigmaDistance: 0.94 });
    expect(store.objects.tracklet('ZX27A01')).toHaveLength(3);
    expect(store.work.get('ZX27A01')?.state).toBe('waiting');
    expect(store.requests.get(id)).toMatchObject({ state: 'done', outcome: { positions: 1, held: 0 } });
  });

  it('keeps a position outside the 5-sigma region but holds it back until an operator confirms it', async () => {
    const { id, token, store } = await setup();
    clockAt.t = T0 + 30 * 60_000;
    const positions = [{ t: at(22), ra: 151.3, dec: -12.33 + 30 / 3600, sigma: 0.3 }];
    const res = await report(id, { leaseToken: token, result: 'done', observedAt: at(25), positions });
    expect(res.statusCode).toBe(200);
    const [p] = res.json().positions;
    expect(p).toMatchObject({ held: true });
    expect(p.heldReason).toMatch(/^possible misidentification: 14\.\d sigma from the predicted place/);
    expect(store.objects.observations('ZX27A01')).toHaveLength(3);
    expect(store.objects.tracklet('ZX27A01')).toHaveLength(2);
    const shown = (await app!.inject({ url: '/v1/objects/ZX27A01', headers: operator })).json().tracklet.find((o: { id: number }) => o.id === p.id);
    expect(shown).toMatchObject({ held: true, confirmedAt: null });

    const url = `/v1/objects/ZX27A01/observations/${p.id}/confirm`;
    expect((await app!.inject({ method: 'POST', url, headers: scheduler, payload: {} })).statusCode).toBe(403);
    const confirmed = await app!.inject({ method: 'POST', url, headers: operator, payload: { note: 'checked the frames: it is the object' } });
    expect(confirmed.statusCode).toBe(200);
    expect(confirmed.json().observation).toMatchObject({ held: false, confirmedBy: 'demo-operator: checked the frames: it is the object' });
    expect(store.objects.tracklet('ZX27A01')).toHaveLength(3);
    const again = await app!.inject({ method: 'POST', url, headers: operator, payload: {} });
    expect(again.statusCode).toBe(409);
    expect((await app!.inject({ method: 'POST', url: '/v1/objects/ZX27A01/observations/99999/confirm', headers: operator, payload: {} })).statusCode).toBe(404);
  });
});
