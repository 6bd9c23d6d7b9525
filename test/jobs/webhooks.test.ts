import { createHmac } from 'node:crypto';
import { join } from 'node:path';
import Fastify, { type FastifyInstance } from 'fastify';
import { afterEach, describe, expect, it } from 'vitest';
import { MIGRATIONS_DIR } from '../../src/config/load.js';
import { announce, deliverDue, retryDelayS, SIGNATURE_HEADER } from '../../src/jobs/webhooks.js';
import { openStore } from '../../src/store/index.js';
import { demoConfig, memoryStore, tempDir } from '../helpers.js';

const SECRET = 'a-test-secret-of-some-length';
let receiver: FastifyInstance | null = null;
afterEach(async () => {
  await receiver?.close();
  receiver = null;
});

interface Received {
  body: string;
  signature: string | undefined;
}

/** A loopback receiver that answers `failFirst` times with 503, then 204. */
async function startReceiver(failFirst = 0): Promise<{ url: string; got: Received[] }> {
  const got: Received[] = [];
  let failures = 0;
  receiver = Fastify();
  receiver.addContentTypeParser('application/json', { parseAs: 'string' }, (_r, body, done) => done(null, body));
  receiver.post('/hook', async (request, reply) => {
    if (failures < failFirst) {
      failures += 1;
      return reply.status(503).send();
    }
    got.push({ body: request.body as string, signature: request.headers[SIGNATURE_HEADER] as string | undefined });
    return reply.status(204).send();
  });
  const url = `${await receiver.listen({ host: '127.0.0.1', port: 0 })}/hook`;
  return { url, got };
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
  it('delivers a signed POST whose HMAC-SHA256 verifies over the raw body', async () => {
    const { url, got } = await startReceiver();
    const config = configWithHook(url);
    const now = { t: Date.parse('2027-03-04T06:00:00Z') };
    const clock = () => new Date(now.t);
    const store = memoryStore(clock);
    expect(announce(store, config.service.webhooks, clock(), { event: 'request.queued', request: request(75) })).toBe(1);
    expect(await deliverDue({ config, store, clock })).toEqual({ delivered: 1, failed: 0, retrying: 0 });
    expect(got).toHaveLength(1);
    const expected = `sha256=${createHmac('sha256', SECRET).update(got[0]!.body).digest('hex')}`;
    expect(got[0]!.signature).toBe(expected);
    expect(JSON.parse(got[0]!.body)).toMatchObject({ event: 'request.queued', request: { id: 'rq_test', score: 75 } });
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
    now.t += retryDelayS(1) * 1000;
    expect(await deliverDue({ config, store, clock })).toMatchObject({ retrying: 1 });
    now.t += retryDelayS(2) * 1000;
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
    now.t += retryDelayS(1) * 1000;
    expect(await deliverDue({ config: restarted, store: second, clock })).toMatchObject({ delivered: 1 });
    expect(JSON.parse(got[0]!.body).request.score).toBe(95);
    second.db.close();
  });
});
