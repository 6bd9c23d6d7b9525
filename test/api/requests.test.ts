import { afterEach, describe, expect, it } from 'vitest';
import type { FastifyInstance } from 'fastify';
import { buildApp } from '../../src/api/app.js';
import { MIGRATIONS_DIR } from '../../src/config/load.js';
import type { NewRequest } from '../../src/store/requests.js';
import type { Store } from '../../src/store/index.js';
import { buildTestApp, DEMO_TOKENS, demoConfig, exampleNotice, examplePlan, memoryStore } from '../helpers.js';

const T0 = Date.parse('2027-03-04T06:00:00Z');
const clockAt = { t: T0 };
const clock = () => new Date(clockAt.t);
const at = (minutes: number) => new Date(T0 + minutes * 60_000).toISOString();

let app: FastifyInstance | null = null;
afterEach(async () => {
  await app?.close();
  app = null;
  clockAt.t = T0;
});

const auth = (token: string) => ({ authorization: `Bearer ${token}` });
const scheduler = auth(DEMO_TOKENS.scheduler);

function proposal(kind: NewRequest['kind'], score: number, siteId = 'lantern-ridge'): NewRequest {
  return {
    siteId,
    kind,
    score,
    windowStart: at(10),
    windowEnd: at(200),
    recommendedStart: at(15),
    expiresAt: at(200),
    body: examplePlan({ kind, siteId, windowStartUtc: at(10), windowEndUtc: at(200), recommendedStartUtc: at(15), expiresAtUtc: at(200) }),
  };
}

/** An empty invented notice, so the object exists. */
function recordObject(store: Store, objectId: string, noticeId: string, minutes: number): void {
  store.notices.recordNotice({
    sender: 'Example Survey (invented)',
    noticeId,
    objectId,
    source: 'test',
    receivedAt: at(minutes),
    issuedAt: at(minutes),
    raw: '{}',
    kind: 'observations',
    retractionReason: null,
    orbitJson: null,
    observations: [],
  });
}

function seed(store: Store): string[] {
  recordObject(store, 'ZX27A01', 'seed', -30);
  return store.requests.saveAssessment({
    objectId: 'ZX27A01',
    createdAt: at(0),
    observations: 2,
    summary: { note: 'test' },
    requests: [proposal('photometry', 60), proposal('colours', 80), proposal('spectrum', 40, 'kestrel-hollow')],
  }).created;
}

/** A second invented object with one request, assessed after the seed. */
function secondObject(store: Store, request: NewRequest): void {
  recordObject(store, 'ZX27A02', 'second', -20);
  store.requests.saveAssessment({ objectId: 'ZX27A02', createdAt: at(1), observations: 2, summary: {}, requests: [request] });
}

async function setup() {
  const built = await buildTestApp({ clock });
  app = built.app;
  const ids = seed(built.store);
  return { ...built, ids };
}

async function lease(id: string, holder = 'queue-a', seconds = 600) {
  return app!.inject({ method: 'POST', url: `/v1/requests/${id}/lease`, headers: scheduler, payload: { holder, seconds } });
}

describe('queue and leases', () => {
  it('lists the queued requests of a site by score with their plan', async () => {
    await setup();
    const res = await app!.inject({ url: '/v1/queue?site=lantern-ridge', headers: scheduler });
    expect(res.statusCode).toBe(200);
    const body = res.json();
    expect(body.items.map((r: { kind: string }) => r.kind)).toEqual(['colours', 'photometry']);
    expect(body.items[0].plan.tracking.raRateArcsecPerS).toBe(0.52);
  });

  it('shows a lease, a new assessment and the passing of a window end in the very next queue answer', async () => {
    const { store, ids } = await setup();
    const queue = async (url = '/v1/queue?site=lantern-ridge') =>
      (await app!.inject({ url, headers: scheduler })).json().items.map((r: { kind: string }) => r.kind);
    expect(await queue()).toEqual(['colours', 'photometry']);
    expect(await queue()).toEqual(['colours', 'photometry']);
    await lease(ids[1]!);
    expect(await queue()).toEqual(['photometry']);
    secondObject(store, { ...proposal('spectrum', 90), windowEnd: at(100), expiresAt: at(100) });
    expect(await queue()).toEqual(['spectrum', 'photometry']);
    clockAt.t = T0 + 100 * 60_000;
    expect(await queue()).toEqual(['photometry']);
  });

  it('lets a window that opens inside a later interval join the queue answer', async () => {
    const { store } = await setup();
    secondObject(store, { ...proposal('spectrum', 90), windowStart: at(20 * 60), windowEnd: at(21 * 60), recommendedStart: at(20 * 60), expiresAt: at(21 * 60) });
    const kinds = async (to: string) => (await app!.inject({ url: `/v1/queue?site=lantern-ridge&from=${at(0)}&to=${to}`, headers: scheduler })).json().items.map((r: { kind: string }) => r.kind);
    expect(await kinds(at(60))).toEqual(['colours', 'photometry']);
    expect(await kinds(at(20 * 60))).toEqual(['spectrum', 'colours', 'photometry']);
    expect(await kinds(at(60))).toEqual(['colours', 'photometry']);
  });

  it('answers 304 to a conditional queue read while nothing changed, and 200 with a new tag after a change', async () => {
    const { store } = await setup();
    const first = await app!.inject({ url: '/v1/queue?site=lantern-ridge', headers: scheduler });
    const etag = first.headers['etag'] as string;
    expect(etag).toMatch(/^W\/"[A-Za-z0-9_-]+"$/);
    clockAt.t += 60_000;
    const again = await app!.inject({ url: '/v1/queue?site=lantern-ridge', headers: { ...scheduler, 'if-none-match': etag } });
    expect(again.statusCode).toBe(304);
    expect(again.body).toBe('');
    secondObject(store, proposal('spectrum', 90));
    const changed = await app!.inject({ url: '/v1/queue?site=lantern-ridge', headers: { ...scheduler, 'if-none-match': etag } });
    expect(changed.statusCode).toBe(200);
    expect(changed.headers['etag']).not.toBe(etag);
  });

  it('pages the queue with nextCursor in score order, every request once', async () => {
    const { store } = await setup();
    secondObject(store, proposal('spectrum', 70));
    const page1 = (await app!.inject({ url: '/v1/queue?site=lantern-ridge&limit=2', headers: scheduler })).json();
    expect(page1.items.map((r: { score: number }) => r.score)).toEqual([80, 70]);
    const page2 = (await app!.inject({ url: `/v1/queue?site=lantern-ridge&limit=2&cursor=${page1.nextCursor}`, headers: scheduler })).json();
    expect(page2.items.map((r: { score: number }) => r.score)).toEqual([60]);
    expect(page2.nextCursor).toBeNull();
  });

  it('refuses a queue cursor it did not give out', async () => {
    await setup();
    const res = await app!.inject({ url: '/v1/queue?site=lantern-ridge&cursor=bm9wZQ', headers: scheduler });
    expect(res.statusCode).toBe(400);
    expect(res.json().error.details[0].path).toBe('query.cursor');
  });

  it('refuses a queue interval whose from is after its to', async () => {
    await setup();
    const res = await app!.inject({ url: `/v1/queue?site=lantern-ridge&from=${at(60)}&to=${at(0)}`, headers: scheduler });
    expect(res.statusCode).toBe(400);
    expect(res.json().error).toMatchObject({ code: 'bad_request', details: [{ path: 'query.to', message: 'must not be before from' }] });
  });

  it('keeps the id of a request a replan revises, and shows its revisions', async () => {
    const { store, ids } = await setup();
    store.requests.saveAssessment({
      objectId: 'ZX27A01',
      createdAt: at(10),
      observations: 3,
      summary: {},
      requests: [{ ...proposal('photometry', 62), windowStart: at(12) }, proposal('colours', 80), proposal('spectrum', 40, 'kestrel-hollow')],
    });
    const res = (await app!.inject({ url: `/v1/requests/${ids[0]}`, headers: scheduler })).json();
    expect(res).toMatchObject({ id: ids[0], state: 'queued', revision: 2, revisedAt: at(10), score: 62 });
    expect(res.revisions.map((r: { revision: number }) => r.revision)).toEqual([1, 2]);
    expect(res.revisions[1].changes.map((c: { field: string }) => c.field)).toEqual(['window.start', 'score']);
  });

  it('answers 409 naming the replacement when a superseded request is leased', async () => {
    const { store, ids } = await setup();
    const nextNight = { ...proposal('photometry', 60), windowStart: at(24 * 60), windowEnd: at(26 * 60), recommendedStart: at(24 * 60), expiresAt: at(26 * 60) };
    const { created } = store.requests.saveAssessment({ objectId: 'ZX27A01', createdAt: at(5), observations: 3, summary: {}, requests: [nextNight, proposal('colours', 80)] });
    const res = await lease(ids[0]!);
    expect(res.statusCode).toBe(409);
    expect(res.json().error).toMatchObject({ code: 'not_leasable', details: { state: 'superseded', supersededBy: created[0], replacement: created[0] } });
    expect(res.json().error.message).toContain(`lease ${created[0]} instead`);
  });

  it('names an unknown site', async () => {
    await setup();
    const res = await app!.inject({ url: '/v1/queue?site=nowhere', headers: scheduler });
    expect(res.statusCode).toBe(400);
    expect(res.json().error.details[0].path).toBe('query.site');
  });

  it('leases a request and answers a second caller with 409, the holder and the time', async () => {
    const { ids } = await setup();
    const first = await lease(ids[0]!);
    expect(first.statusCode).toBe(200);
    expect(first.json().leaseToken).toMatch(/^[A-Za-z0-9_-]{20,}$/);
    const second = await lease(ids[0]!, 'queue-b');
    expect(second.statusCode).toBe(409);
    expect(second.json().error).toMatchObject({ code: 'lease_conflict', details: { holder: 'queue-a', until: at(10) } });
  });

  it('names a bad lease body by field', async () => {
    const { ids } = await setup();
    const res = await app!.inject({ method: 'POST', url: `/v1/requests/${ids[0]}/lease`, headers: scheduler, payload: { holder: '', seconds: 5 } });
    expect(res.statusCode).toBe(400);
    expect(res.json().error.details.map((d: { path: string }) => d.path).sort()).toEqual(['body.holder', 'body.seconds']);
  });

  it('answers 404 for an unknown request', async () => {
    await setup();
    expect((await lease('rq_nothing')).statusCode).toBe(404);
  });

  it('needs the scheduler role to lease', async () => {
    const { ids } = await setup();
    const res = await app!.inject({ method: 'POST', url: `/v1/requests/${ids[0]}/lease`, headers: auth(DEMO_TOKENS.reader), payload: { holder: 'x', seconds: 60 } });
    expect(res.statusCode).toBe(403);
  });

  it('renews a lease with its token and refuses a wrong token', async () => {
    const { ids } = await setup();
    const token = (await lease(ids[0]!, 'queue-a', 60)).json().leaseToken as string;
    clockAt.t += 50_000;
    const ok = await app!.inject({ method: 'POST', url: `/v1/requests/${ids[0]}/lease/renew`, headers: scheduler, payload: { leaseToken: token, seconds: 600 } });
    expect(ok.statusCode).toBe(200);
    expect(ok.json().leaseExpiresAt).toBe(new Date(clockAt.t + 600_000).toISOString());
    const bad = await app!.inject({ method: 'POST', url: `/v1/requests/${ids[0]}/lease/renew`, headers: scheduler, payload: { leaseToken: 'nope', seconds: 600 } });
    expect(bad.statusCode).toBe(409);
    expect(bad.json().error.code).toBe('stale_lease');
  });

  it('refuses an outcome with a stale lease token after the lease ran out and was taken again', async () => {
    const { ids, store } = await setup();
    const stale = (await lease(ids[0]!, 'queue-a', 60)).json().leaseToken as string;
    clockAt.t += 120_000;
    store.requests.expireLeases(clock());
    const fresh = (await lease(ids[0]!, 'queue-b', 600)).json().leaseToken as string;
    const refused = await app!.inject({ method: 'POST', url: `/v1/requests/${ids[0]}/outcome`, headers: scheduler, payload: { leaseToken: stale, result: 'done', observedAt: at(2) } });
    expect(refused.statusCode).toBe(409);
    const accepted = await app!.inject({ method: 'POST', url: `/v1/requests/${ids[0]}/outcome`, headers: scheduler, payload: { leaseToken: fresh, result: 'done', observedAt: at(2) } });
    expect(accepted.statusCode).toBe(200);
    expect(accepted.json().request.state).toBe('done');
  });

  it("turns the positions of an outcome into a notice for the object and queues it again", async () => {
    const { ids, store } = await setup();
    const token = (await lease(ids[0]!, 'queue-a', 3600)).json().leaseToken as string;
    clockAt.t = T0 + 30 * 60_000;
    const positions = [
      { t: at(25), ra: 151.3089, dec: -12.3282, sigma: 0.3 },
      { t: at(20), ra: 151.3012, dec: -12.3301, sigma: 0.3, mag: 19.2, band: 'V' },
    ];
    const res = await app!.inject({ method: 'POST', url: `/v1/requests/${ids[0]}/outcome`, headers: scheduler, payload: { leaseToken: token, result: 'done', observedAt: at(25), positions } });
    expect(res.statusCode).toBe(200);
    expect(res.json().notice).toMatchObject({ status: 'accepted', observationsAdded: 2 });
    expect(res.json().positions.map((p: { t: string; held: boolean }) => [p.t, p.held])).toEqual([[at(20), false], [at(25), false]]);
    const notice = store.notices.findNotice('site:lantern-ridge', `outcome-${ids[0]}-astrometry`);
    expect(notice?.objectId).toBe('ZX27A01');
    expect(store.objects.observations('ZX27A01')[0]).toMatchObject({ obsLatDeg: 34.21, obsLonDeg: -107.62, obsHeightM: 2310 });
    expect(store.work.get('ZX27A01')?.state).toBe('waiting');
  });

  it('lets an operator withdraw a request, with the reason in its history', async () => {
    const { ids } = await setup();
    const res = await app!.inject({ method: 'POST', url: `/v1/requests/${ids[1]}/withdraw`, headers: auth(DEMO_TOKENS.operator), payload: { reason: 'dome fault tonight' } });
    expect(res.statusCode).toBe(200);
    expect(res.json()).toMatchObject({ state: 'withdrawn', stateReason: 'withdrawn by demo-operator: dome fault tonight' });
    const again = await app!.inject({ method: 'POST', url: `/v1/requests/${ids[1]}/withdraw`, headers: auth(DEMO_TOKENS.operator), payload: { reason: 'again' } });
    expect(again.statusCode).toBe(409);
  });

  it('shows one request with its history', async () => {
    const { ids } = await setup();
    await lease(ids[0]!);
    const res = await app!.inject({ url: `/v1/requests/${ids[0]}`, headers: auth(DEMO_TOKENS.reader) });
    expect(res.json().history.map((h: { toState: string }) => h.toState)).toEqual(['queued', 'leased']);
    expect(res.json().lease.holder).toBe('queue-a');
  });

  it('pages through requests with a cursor and filters by state', async () => {
    const { ids } = await setup();
    await lease(ids[0]!);
    const page1 = (await app!.inject({ url: '/v1/requests?limit=2', headers: auth(DEMO_TOKENS.reader) })).json();
    expect(page1.items).toHaveLength(2);
    const page2 = (await app!.inject({ url: `/v1/requests?limit=2&cursor=${page1.nextCursor}`, headers: auth(DEMO_TOKENS.reader) })).json();
    expect(page2.items).toHaveLength(1);
    expect(new Set([...page1.items, ...page2.items].map((r: { id: string }) => r.id))).toEqual(new Set(ids));
    const leased = (await app!.inject({ url: '/v1/requests?state=leased', headers: auth(DEMO_TOKENS.reader) })).json();
    expect(leased.items.map((r: { id: string }) => r.id)).toEqual([ids[0]]);
  });

  it('shows an object with its tracklet, assessment and requests', async () => {
    await setup();
    const res = await app!.inject({ url: '/v1/objects/ZX27A01', headers: auth(DEMO_TOKENS.reader) });
    expect(res.statusCode).toBe(200);
    expect(res.json()).toMatchObject({ id: 'ZX27A01', state: 'active', assessment: { note: 'test' } });
    expect(res.json().requests).toHaveLength(3);
    expect((await app!.inject({ url: '/v1/objects/NOPE', headers: auth(DEMO_TOKENS.reader) })).statusCode).toBe(404);
  });
});

describe('a real listening server', () => {
  it('gives exactly one of 20 concurrent lease attempts the lease', async () => {
    const store = memoryStore(clock);
    const ids = seed(store);
    app = await buildApp({ config: demoConfig(), store, clock, migrationsDir: MIGRATIONS_DIR });
    const url = await app.listen({ host: '127.0.0.1', port: 0 });
    const answers = await Promise.all(
      Array.from({ length: 20 }, (_, k) =>
        fetch(`${url}/v1/requests/${ids[0]}/lease`, {
          method: 'POST',
          headers: { ...scheduler, 'content-type': 'application/json' },
          body: JSON.stringify({ holder: `queue-${k}`, seconds: 300 }),
        }).then(async (r) => ({ status: r.status, body: (await r.json()) as { error?: { details?: { holder: string } } } })),
      ),
    );
    const winners = answers.filter((a) => a.status === 200);
    const losers = answers.filter((a) => a.status === 409);
    expect(winners).toHaveLength(1);
    expect(losers).toHaveLength(19);
    const holder = store.requests.get(ids[0]!)?.leaseHolder;
    for (const l of losers) expect(l.body.error?.details?.holder).toBe(holder);
  });
});

describe('service documents', () => {
  it('publishes an OpenAPI document listing every route', async () => {
    await setup();
    const doc = (await app!.inject({ url: '/v1/openapi.json' })).json();
    expect(doc.openapi).toBe('3.1.0');
    const listed = Object.entries(doc.paths as Record<string, Record<string, unknown>>).flatMap(([p, ops]) => Object.keys(ops).map((m) => `${m.toUpperCase()} ${p}`));
    const registered = app!
      .printRoutes({ commonPrefix: false })
      .split('\n')
      .filter((l) => l.includes('('));
    expect(registered.length).toBeGreaterThan(0);
    for (const route of [
      'GET /v1/queue',
      'POST /v1/requests/{id}/lease',
      'POST /v1/requests/{id}/lease/renew',
      'POST /v1/requests/{id}/outcome',
      'POST /v1/requests/{id}/withdraw',
      'GET /v1/requests/{id}',
      'GET /v1/requests',
      'GET /v1/objects',
      'GET /v1/objects/{id}',
      'POST /v1/objects/{id}/observations/{obsId}/confirm',
      'GET /v1/notices',
      'POST /v1/notices',
      'GET /v1/rejections',
      'GET /v1/rejections/{id}',
      'GET /v1/sites',
      'GET /healthz',
      'GET /readyz',
      'GET /metrics',
      'GET /v1/openapi.json',
      'GET /v1/docs',
    ])
      expect(listed).toContain(route);
    expect(doc.info.description).toContain('not impact predictions');
  });

  it('serves a readable docs page with the cautions', async () => {
    await setup();
    const res = await app!.inject({ url: '/v1/docs' });
    expect(res.headers['content-type']).toContain('text/html');
    expect(res.body).toContain('interlocks');
    expect(res.body).toContain('POST /v1/requests/{id}/lease');
  });

  it('exposes metrics in the Prometheus text format', async () => {
    await setup();
    await app!.inject({ method: 'POST', url: '/v1/notices', headers: auth(DEMO_TOKENS.feeder), payload: exampleNotice() });
    await app!.inject({ method: 'POST', url: '/v1/notices', headers: auth(DEMO_TOKENS.feeder), payload: { format: 'x' } });
    const text = (await app!.inject({ url: '/metrics' })).body;
    expect(text).toContain('nightjar_notices_received_total{source="http",result="accepted"} 1');
    expect(text).toContain('nightjar_notices_received_total{source="http",result="rejected"} 1');
    expect(text).toContain('nightjar_queue_depth{site="lantern-ridge"} 2');
    expect(text).toMatch(/# TYPE nightjar_assessment_seconds histogram/);
  });

  it('answers 429 once a caller exceeds the rate limit', async () => {
    const config = demoConfig((raw) => {
      (raw['service'] as Record<string, unknown>)['rateLimitPerMinute'] = 5;
    });
    const built = await buildTestApp({ clock, config });
    app = built.app;
    const codes: number[] = [];
    for (let k = 0; k < 7; k++) codes.push((await app.inject({ url: '/v1/objects', headers: auth(DEMO_TOKENS.reader) })).statusCode);
    expect(codes).toEqual([200, 200, 200, 200, 200, 429, 429]);
    const other = await app.inject({ url: '/v1/objects', headers: auth(DEMO_TOKENS.scheduler) });
    expect(other.statusCode).toBe(200);
  });
});

describe('replanning after an outcome', () => {
  it('puts the object back on the work queue when a request is reported done without positions', async () => {
    const { ids, store } = await setup();
    store.work.claimNext(clock());
    store.work.finish('ZX27A01', clock());
    const token = (await lease(ids[0]!)).json().leaseToken as string;
    const res = await app!.inject({ method: 'POST', url: `/v1/requests/${ids[0]}/outcome`, headers: scheduler, payload: { leaseToken: token, result: 'done', observedAt: at(1) } });
    expect(res.json().replanQueued).toBe(true);
    expect(store.work.get('ZX27A01')?.state).toBe('waiting');
  });
});
