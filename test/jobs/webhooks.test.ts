import { createHmac, timingSafeEqual } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import Fastify, { type FastifyInstance } from 'fastify';
import { Webhook } from 'standardwebhooks';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { MIGRATIONS_DIR, PROJECT_ROOT } from '../../src/config/load.js';
import { announce, deliverDue, ID_HEADER, retryBaseS, retryDelayS, SIGNATURE_HEADER, TIMESTAMP_HEADER } from '../../src/jobs/webhooks.js';
import { openStore } from '../../src/store/index.js';
import { demoConfig, memoryStore, tempDir } from '../helpers.js';

const SECRET = 'a-test-secret-of-some-length';
let receiver: FastifyInstance | null = null;
afterEach(async () => {
  await receiver?.close();
  receiver = null;
  vi.useRealTimers();
});

interface Received {
  body: string;
  headers: Record<string, string>;
}

/** A loopback receiver that answers `failFirst` times with 503, then 204; `got` holds what it took, `attempts` every call. */
async function startReceiver(failFirst = 0): Promise<{ url: string; got: Received[]; attempts: Received[] }> {
  const got: Received[] = [];
  const attempts: Received[] = [];
  let failures = 0;
  receiver = Fastify();
  receiver.addContentTypeParser('application/json', { parseAs: 'string' }, (_r, body, done) => done(null, body));
  receiver.post('/hook', async (request, reply) => {
    attempts.push({ body: request.body as string, headers: request.headers as Record<string, string> });
    if (failures < failFirst) {
      failures += 1;
      return reply.status(503).send();
    }
    got.push({ body: request.body as string, headers: request.headers as Record<string, string> });
    return reply.status(204).send();
  });
  const url = `${await receiver.listen({ host: '127.0.0.1', port: 0 })}/hook`;
  return { url, got, attempts };
}

function configWithHook(url: string) {
  return demoConfig((raw) => {
    (raw['service'] as Record<string, unknown>)['webhooks'] = [{ id: 'night-desk', url, secret: SECRET, minScore: 60 }];
  });
}

const request = (score: number) => ({
  id: 'rq_test',
  objectId: 'ZX27A01',
  siteId: 'lantern-ridge',
  kind: 'photometry',
  score,
  windowStart: '2027-03-04T07:00:00.000Z',
  windowEnd: '2027-03-04T09:00:00.000Z',
});

describe('webhooks', () => {
  it('signs each delivery as Standard Webhooks has it: id, timestamp and an HMAC-SHA256 over "id.timestamp.body"', async () => {
    const { url, got } = await startReceiver();
    const config = configWithHook(url);
    const now = { t: Date.parse('2027-03-04T06:00:00Z') };
    const clock = () => new Date(now.t);
    const store = memoryStore(clock);
    expect(announce(store, config.service.webhooks, clock(), { event: 'request.queued', request: request(75) })).toBe(1);
    expect(await deliverDue({ config, store, clock })).toEqual({ delivered: 1, failed: 0, retrying: 0 });
    expect(got).toHaveLength(1);
    const { body, headers } = got[0]!;
    expect(headers[TIMESTAMP_HEADER]).toBe(String(now.t / 1000));
    // Recomputed here with node:crypto from the specification's formula, not with the signing code.
    const expected = createHmac('sha256', Buffer.from(SECRET, 'utf8')).update(`${headers[ID_HEADER]}.${headers[TIMESTAMP_HEADER]}.${body}`).digest('base64');
    expect(headers[SIGNATURE_HEADER]).toBe(`v1,${expected}`);
    expect(JSON.parse(body)).toMatchObject({ event: 'request.queued', request: { id: 'rq_test', score: 75 } });
  });

  it('lets a receiver refuse a replay: the signature holds at delivery and fails once the timestamp is old', async () => {
    const { url, got } = await startReceiver();
    const config = configWithHook(url);
    const sentAt = Date.parse('2027-03-04T06:00:00Z');
    const clock = () => new Date(sentAt);
    const store = memoryStore(clock);
    announce(store, config.service.webhooks, clock(), { event: 'request.queued', request: request(75) });
    await deliverDue({ config, store, clock });
    const receiverSide = new Webhook(Buffer.from(SECRET, 'utf8'), { format: 'raw' });
    vi.useFakeTimers({ toFake: ['Date'] });
    vi.setSystemTime(sentAt + 30_000);
    expect(receiverSide.verify(got[0]!.body, got[0]!.headers)).toMatchObject({ event: 'request.queued' });
    vi.setSystemTime(sentAt + 6 * 60_000);
    expect(() => receiverSide.verify(got[0]!.body, got[0]!.headers)).toThrow(/timestamp too old/);
    const tampered = got[0]!.body.replace('"score":75', '"score":99');
    vi.setSystemTime(sentAt + 30_000);
    expect(() => receiverSide.verify(tampered, got[0]!.headers)).toThrow(/No matching signature/);
  });

  it("accepts a delivery with the README's verification snippet, and refuses its replay, a changed body and an old one", async () => {
    const readme = readFileSync(join(PROJECT_ROOT, 'README.md'), 'utf8');
    const code = /```js\n(import \{ createHmac, timingSafeEqual \} from 'node:crypto';[\s\S]*?)```/.exec(readme)![1]!.replace(/^import .*$/m, '');
    type Verify = (body: Buffer, headers: Record<string, string>, secret: string, seen: Set<string>) => boolean;
    // eslint-disable-next-line @typescript-eslint/no-implied-eval -- runs the README's own snippet, as a receiver would paste it
    const verify = new Function('createHmac', 'timingSafeEqual', `${code}\nreturn verifyNightjar;`)(createHmac, timingSafeEqual) as Verify;
    const { url, got } = await startReceiver();
    const config = configWithHook(url);
    const clock = () => new Date();
    const store = memoryStore(clock);
    announce(store, config.service.webhooks, clock(), { event: 'request.queued', request: request(80) });
    await deliverDue({ config, store, clock });
    const { body, headers } = got[0]!;
    const seen = new Set<string>();
    expect(verify(Buffer.from(body.replace('"score":80', '"score":81')), headers, SECRET, seen)).toBe(false);
    expect(verify(Buffer.from(body), headers, SECRET, seen)).toBe(true);
    expect(verify(Buffer.from(body), headers, SECRET, seen)).toBe(false);
    const old = { ...headers, [TIMESTAMP_HEADER]: String(Math.floor(Date.now() / 1000) - 600) };
    expect(verify(Buffer.from(body), old, SECRET, new Set())).toBe(false);
  });

  it('verifies with a Standard Webhooks secret (whsec_ and base64) as receivers hold it', async () => {
    const { url, got } = await startReceiver();
    const secret = `whsec_${Buffer.from('an invented key of thirty-two by').toString('base64')}`;
    const config = demoConfig((raw) => {
      (raw['service'] as Record<string, unknown>)['webhooks'] = [{ id: 'night-desk', url, secret, minScore: 60 }];
    });
    const clock = () => new Date();
    const store = memoryStore(clock);
    announce(store, config.service.webhooks, clock(), { event: 'request.queued', request: request(75) });
    await deliverDue({ config, store, clock });
    expect(new Webhook(secret).verify(got[0]!.body, got[0]!.headers)).toMatchObject({ request: { id: 'rq_test' } });
  });

  it('keeps the id of a delivery over its retries, with a fresh timestamp and signature each time', async () => {
    const { url, attempts } = await startReceiver(1);
    const config = configWithHook(url);
    const now = { t: Date.parse('2027-03-04T06:00:00Z') };
    const clock = () => new Date(now.t);
    const store = memoryStore(clock);
    announce(store, config.service.webhooks, clock(), { event: 'request.queued', request: request(90) });
    await deliverDue({ config, store, clock });
    now.t += retryBaseS(1) * 1000;
    await deliverDue({ config, store, clock });
    expect(attempts).toHaveLength(2);
    expect(attempts[1]!.headers[ID_HEADER]).toBe(attempts[0]!.headers[ID_HEADER]);
    expect(attempts[1]!.headers[TIMESTAMP_HEADER]).not.toBe(attempts[0]!.headers[TIMESTAMP_HEADER]);
    expect(attempts[1]!.headers[SIGNATURE_HEADER]).not.toBe(attempts[0]!.headers[SIGNATURE_HEADER]);
  });

  it('spreads the retries of deliveries that failed together (jitter: between half and all of the backoff)', async () => {
    const config = configWithHook('http://127.0.0.1:1/unreachable');
    const t0 = Date.parse('2027-03-04T06:00:00Z');
    const clock = () => new Date(t0);
    const store = memoryStore(clock);
    for (let k = 0; k < 20; k++) announce(store, config.service.webhooks, clock(), { event: 'request.queued', request: { ...request(90), id: `rq_${k}` } });
    expect(await deliverDue({ config, store, clock })).toMatchObject({ retrying: 20 });
    const waits = store.deliveries.list({ limit: 50 }).map((d) => (Date.parse(d.nextAttemptAt) - t0) / 1000);
    for (const w of waits) {
      expect(w).toBeGreaterThanOrEqual(retryBaseS(1) / 2);
      expect(w).toBeLessThanOrEqual(retryBaseS(1));
    }
    expect(new Set(waits).size).toBeGreaterThan(10);
    expect(retryDelayS(3, () => 0)).toBe(20);
    expect(retryDelayS(3, () => 0.5)).toBe(30);
  });

  it('stops at once when the service stops: an unsent delivery stays due, its attempt not counted', async () => {
    receiver = Fastify();
    receiver.post('/hook', () => new Promise(() => {}));
    const url = `${await receiver.listen({ host: '127.0.0.1', port: 0 })}/hook`;
    const config = demoConfig((raw) => {
      (raw['service'] as Record<string, unknown>)['webhooks'] = [{ id: 'night-desk', url, secret: SECRET, minScore: 60, timeoutMs: 30_000 }];
    });
    const clock = () => new Date('2027-03-04T06:00:00Z');
    const store = memoryStore(clock);
    for (let k = 0; k < 3; k++) announce(store, config.service.webhooks, clock(), { event: 'request.queued', request: { ...request(90), id: `rq_${k}` } });
    const stopping = new AbortController();
    const started = Date.now();
    const run = deliverDue({ config, store, clock, signal: stopping.signal });
    setTimeout(() => stopping.abort(), 200);
    expect(await run).toEqual({ delivered: 0, failed: 0, retrying: 0 });
    expect(Date.now() - started).toBeLessThan(5000);
    expect(store.deliveries.list({ limit: 10 }).map((d) => [d.state, d.attempts])).toEqual([['pending', 0], ['pending', 0], ['pending', 0]]);
    await receiver.close().catch(() => {});
    receiver = null;
  });

  it('does not announce a request below the hook minimum score', () => {
    const config = configWithHook('http://127.0.0.1:9/hook');
    const store = memoryStore();
    expect(announce(store, config.service.webhooks, new Date(), { event: 'request.queued', request: request(40) })).toBe(0);
  });

  it('retries a receiver that fails at first, with backoff, and shows each attempt', async () => {
    const { url, got } = await startReceiver(2);
    const config = configWithHook(url);
    const now = { t: Date.parse('2027-03-04T06:00:00Z') };
    const clock = () => new Date(now.t);
    const store = memoryStore(clock);
    announce(store, config.service.webhooks, clock(), { event: 'request.queued', request: request(90) });
    expect(await deliverDue({ config, store, clock })).toMatchObject({ retrying: 1 });
    expect(await deliverDue({ config, store, clock })).toEqual({ delivered: 0, failed: 0, retrying: 0 });
    now.t += retryBaseS(1) * 1000;
    expect(await deliverDue({ config, store, clock })).toMatchObject({ retrying: 1 });
    now.t += retryBaseS(2) * 1000;
    expect(await deliverDue({ config, store, clock })).toMatchObject({ delivered: 1 });
    expect(got).toHaveLength(1);
    const [row] = store.deliveries.list({ limit: 1 });
    expect(row?.attemptLog.map((a) => a.status)).toEqual([503, 503, 204]);
    expect(row?.state).toBe('delivered');
  });

  it('still delivers after a restart: the outbox is in the database', async () => {
    const dir = tempDir('nightjar-hooks-');
    const path = join(dir, 'db.sqlite');
    const config = configWithHook('http://127.0.0.1:1/unreachable');
    const now = { t: Date.parse('2027-03-04T06:00:00Z') };
    const clock = () => new Date(now.t);
    const first = openStore(path, MIGRATIONS_DIR, clock);
    announce(first, config.service.webhooks, clock(), { event: 'request.queued', request: request(95) });
    expect(await deliverDue({ config, store: first, clock })).toMatchObject({ retrying: 1 });
    first.db.close();

    const { url, got } = await startReceiver();
    const restarted = configWithHook(url);
    const second = openStore(path, MIGRATIONS_DIR, clock);
    now.t += retryBaseS(1) * 1000;
    expect(await deliverDue({ config: restarted, store: second, clock })).toMatchObject({ delivered: 1 });
    expect(JSON.parse(got[0]!.body).request.score).toBe(95);
    second.db.close();
  });
});
