import { afterEach, describe, expect, it } from 'vitest';
import type { FastifyInstance } from 'fastify';
import { buildTestApp, DEMO_TOKENS, demoConfig, exampleNotice } from '../helpers.js';

let app: FastifyInstance | null = null;
afterEach(async () => {
  await app?.close();
  app = null;
});

async function setup(options: Parameters<typeof buildTestApp>[0] = {}) {
  const built = await buildTestApp(options);
  app = built.app;
  return built;
}

const bearer = (token: string) => ({ authorization: `Bearer ${token}` });

describe('POST /v1/notices', () => {
  it('answers 401 without a token', async () => {
    const { app } = await setup();
    const res = await app.inject({ method: 'POST', url: '/v1/notices', payload: exampleNotice() });
    expect(res.statusCode).toBe(401);
    expect(res.json()).toMatchObject({ error: { code: 'unauthenticated' } });
  });

  it('answers 401 with an unknown token', async () => {
    const { app } = await setup();
    const res = await app.inject({ method: 'POST', url: '/v1/notices', headers: bearer('not-a-token'), payload: exampleNotice() });
    expect(res.statusCode).toBe(401);
  });

  it('answers 403 with a token of another role', async () => {
    const { app } = await setup();
    const res = await app.inject({ method: 'POST', url: '/v1/notices', headers: bearer(DEMO_TOKENS.reader), payload: exampleNotice() });
    expect(res.statusCode).toBe(403);
    expect(res.json().error.message).toContain('"feeder"');
  });

  it('answers 202 with a result per notice for a feeder', async () => {
    const { app, store } = await setup();
    const res = await app.inject({
      method: 'POST',
      url: '/v1/notices',
      headers: bearer(DEMO_TOKENS.feeder),
      payload: [exampleNotice(), exampleNotice(), exampleNotice({ noticeId: 'x', observer: { lat: 100, lon: 0, height: 0 } })],
    });
    expect(res.statusCode).toBe(202);
    const body = res.json();
    expect(body.results.map((r: { status: string }) => r.status)).toEqual(['accepted', 'duplicate', 'rejected']);
    expect(body.results[2].reasons[0].path).toBe('observer.lat');
    expect(store.notices.counts()).toMatchObject({ notices: 1, rejections: 1 });
  });

  it('keeps the body verbatim', async () => {
    const { app, store } = await setup();
    const text = JSON.stringify(exampleNotice(), null, 4);
    await app.inject({ method: 'POST', url: '/v1/notices', headers: { ...bearer(DEMO_TOKENS.feeder), 'content-type': 'application/json' }, payload: text });
    expect(store.notices.findNotice('Example Survey (invented)', 'ex-0001')?.raw).toBe(text);
  });

  it('answers 422 and keeps the body when every notice is rejected, even unparseable JSON', async () => {
    const { app, store } = await setup();
    const res = await app.inject({
      method: 'POST',
      url: '/v1/notices',
      headers: { ...bearer(DEMO_TOKENS.feeder), 'content-type': 'application/json' },
      payload: '{"format": "nightjar.notice.v1", ',
    });
    expect(res.statusCode).toBe(422);
    expect(res.json().results[0].reasons[0].message).toMatch(/^not valid JSON/);
    expect(store.notices.listRejections({ limit: 1 })[0]?.raw).toBe('{"format": "nightjar.notice.v1", ');
  });

  it('answers 413 in the error shape for an oversize body', async () => {
    const config = demoConfig((raw) => {
      (raw['service'] as Record<string, unknown>)['bodyLimitBytes'] = 2048;
    });
    const { app } = await setup({ config });
    const res = await app.inject({
      method: 'POST',
      url: '/v1/notices',
      headers: { ...bearer(DEMO_TOKENS.feeder), 'content-type': 'application/json' },
      payload: JSON.stringify({ pad: 'x'.repeat(5000) }),
    });
    expect(res.statusCode).toBe(413);
    expect(res.json()).toMatchObject({ error: { code: 'payload_too_large' } });
  });
});

describe('review and health routes', () => {
  it('lists stored notices newest first with a cursor', async () => {
    const { app } = await setup();
    for (const id of ['a', 'b', 'c'])
      await app.inject({ method: 'POST', url: '/v1/notices', headers: bearer(DEMO_TOKENS.feeder), payload: exampleNotice({ noticeId: id }) });
    const first = (await app.inject({ url: '/v1/notices?limit=2', headers: bearer(DEMO_TOKENS.reader) })).json();
    expect(first.items.map((n: { noticeId: string }) => n.noticeId)).toEqual(['c', 'b']);
    const second = (await app.inject({ url: `/v1/notices?limit=2&cursor=${first.nextCursor}`, headers: bearer(DEMO_TOKENS.reader) })).json();
    expect(second.items.map((n: { noticeId: string }) => n.noticeId)).toEqual(['a']);
    expect(second.nextCursor).toBeNull();
  });

  it('lists rejections as summaries: size, reasons and when received, without the payload', async () => {
    const { app } = await setup();
    await app.inject({ method: 'POST', url: '/v1/notices', headers: bearer(DEMO_TOKENS.feeder), payload: { format: 'other' } });
    const body = (await app.inject({ url: '/v1/rejections', headers: bearer(DEMO_TOKENS.reader) })).json();
    expect(body.items[0]).toMatchObject({ sizeBytes: '{"format":"other"}'.length, receivedAt: '2027-03-04T06:00:00.000Z' });
    expect(body.items[0].reasons.some((r: { path: string }) => r.path === 'format')).toBe(true);
    expect(body.items[0].reasonCount).toBe(body.items[0].reasons.length);
    expect(body.items[0]).not.toHaveProperty('raw');
  });

  it('shows one rejection with its payload exactly as received and every reason', async () => {
    const { app } = await setup();
    await app.inject({ method: 'POST', url: '/v1/notices', headers: { ...bearer(DEMO_TOKENS.feeder), 'content-type': 'application/json' }, payload: '{"format": "other"}' });
    const [item] = (await app.inject({ url: '/v1/rejections', headers: bearer(DEMO_TOKENS.reader) })).json().items;
    const one = (await app.inject({ url: `/v1/rejections/${item.id}`, headers: bearer(DEMO_TOKENS.reader) })).json();
    expect(one).toMatchObject({ id: item.id, raw: '{"format": "other"}', sizeBytes: 19, reasonCount: item.reasonCount });
    expect((await app.inject({ url: '/v1/rejections/99999', headers: bearer(DEMO_TOKENS.reader) })).statusCode).toBe(404);
  });

  it('answers a retraction without saying anything was queued', async () => {
    const { app } = await setup();
    await app.inject({ method: 'POST', url: '/v1/notices', headers: bearer(DEMO_TOKENS.feeder), payload: exampleNotice() });
    const retraction = exampleNotice({ noticeId: 'ex-r', issuedAt: '2027-03-04T05:40:00Z', retracted: true, reason: 'false detection' });
    delete retraction['observations'];
    const res = await app.inject({ method: 'POST', url: '/v1/notices', headers: bearer(DEMO_TOKENS.feeder), payload: retraction });
    expect(res.json().results[0]).toMatchObject({ status: 'accepted', objectState: 'retracted', queued: false });
  });

  it('names a bad query parameter', async () => {
    const { app } = await setup();
    const res = await app.inject({ url: '/v1/notices?limit=0', headers: bearer(DEMO_TOKENS.reader) });
    expect(res.statusCode).toBe(400);
    expect(res.json().error.details[0]).toEqual({ path: 'query.limit', message: 'expected a number >= 1' });
  });

  it('answers unknown routes with 404 in the error shape', async () => {
    const { app } = await setup();
    const res = await app.inject({ url: '/v1/nothing-here' });
    expect(res.statusCode).toBe(404);
    expect(res.json()).toEqual({ error: { code: 'not_found', message: 'no route GET /v1/nothing-here', details: null } });
  });

  it('reports ready with the database writable and migrations applied', async () => {
    const { app } = await setup();
    const res = await app.inject({ url: '/readyz' });
    expect(res.statusCode).toBe(200);
    expect(res.json()).toMatchObject({ status: 'ready', database: { writable: true }, migrations: { ok: true } });
  });

  it('shows the work queue per priority class in /readyz and /metrics after a notice', async () => {
    const { app } = await setup();
    const posted = await app.inject({ method: 'POST', url: '/v1/notices', headers: bearer(DEMO_TOKENS.feeder), payload: exampleNotice() });
    expect(posted.statusCode).toBe(202);
    const ready = (await app.inject({ url: '/readyz' })).json();
    expect(ready.workClasses).toEqual({
      'new-data': { waiting: 1, running: 0, oldestAgeS: 0 },
      urgent: { waiting: 0, running: 0, oldestAgeS: 0 },
      routine: { waiting: 0, running: 0, oldestAgeS: 0 },
    });
    const metrics = (await app.inject({ url: '/metrics' })).body;
    expect(metrics).toContain('nightjar_work_class_waiting{class="new-data"} 1');
    expect(metrics).toContain('nightjar_work_class_oldest_age_seconds{class="routine"} 0');
  });

  it('answers /healthz', async () => {
    const { app } = await setup();
    expect((await app.inject({ url: '/healthz' })).json()).toMatchObject({ status: 'ok' });
  });
});
