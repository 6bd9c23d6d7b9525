import { afterEach, describe, expect, it, vi } from 'vitest';
import { RATE_LIMIT_KEYS } from '../../src/api/app.js';
import type { ApiApp } from '../../src/api/http.js';
import { buildTestApp, demoConfig, DEMO_TOKENS } from '../helpers.js';

/**
 * The rate limit counts a verified caller by its token's name and everyone else
 * by address, in a bounded store: changing the Authorization header opens no new
 * allowance, and a flood of strangers neither lets anyone through nor grows memory.
 */
let app: ApiApp | null = null;
afterEach(async () => {
  vi.useRealTimers();
  await app?.close();
  app = null;
});

const PER_MINUTE = 5;
/** An address off the loopback, so reads are not open without a token. */
const REMOTE = '203.0.113.7';

async function limitedApp(perMinute = PER_MINUTE): Promise<ApiApp> {
  const config = demoConfig((raw) => {
    (raw['service'] as Record<string, unknown>)['rateLimitPerMinute'] = perMinute;
  });
  app = (await buildTestApp({ config })).app;
  return app;
}

const get = (a: ApiApp, authorization?: string, remoteAddress = REMOTE) =>
  a.inject({ url: '/v1/sites', remoteAddress, ...(authorization === undefined ? {} : { headers: { authorization } }) });

describe('rate limit', () => {
  it('counts a verified caller by its token, however the header is written', async () => {
    const a = await limitedApp();
    const token = DEMO_TOKENS.reader;
    // The same token written five ways: the old limiter hashed the header and gave each a fresh allowance.
    const headers = [`Bearer ${token}`, `bearer ${token}`, `BEARER ${token}`, `Bearer  ${token}`, `Bearer ${token} `];
    for (const h of headers) expect((await get(a, h)).statusCode).toBe(200);
    const refused = await get(a, `Bearer\t${token}`);
    expect(refused.statusCode).toBe(429);
    expect(refused.json().error).toMatchObject({ code: 'rate_limited', details: { retryAfterS: expect.any(Number) } });
    expect(Number(refused.headers['retry-after'])).toBeGreaterThan(0);
  });

  it('counts the same token from another address against the same allowance', async () => {
    const a = await limitedApp();
    for (let k = 0; k < PER_MINUTE; k++) expect((await get(a, `Bearer ${DEMO_TOKENS.reader}`, `198.51.100.${k + 1}`)).statusCode).toBe(200);
    expect((await get(a, `Bearer ${DEMO_TOKENS.reader}`, '198.51.100.99')).statusCode).toBe(429);
  });

  it('counts unknown tokens by address, so inventing tokens does not escape the limit', async () => {
    const a = await limitedApp();
    const statuses: number[] = [];
    for (let k = 0; k < PER_MINUTE + 3; k++) statuses.push((await get(a, `Bearer invented-${k}`)).statusCode);
    expect(statuses.slice(0, PER_MINUTE)).toEqual(Array(PER_MINUTE).fill(401));
    expect(statuses.slice(PER_MINUTE)).toEqual([429, 429, 429]);
  });

  it('keeps a busy caller limited while more addresses than the store holds come and go', async () => {
    const a = await limitedApp();
    for (let k = 0; k < PER_MINUTE; k++) await get(a, `Bearer ${DEMO_TOKENS.reader}`);
    // More distinct strangers than the store keeps: the old limiter stopped limiting anyone new after 10 000 keys.
    const strangers = RATE_LIMIT_KEYS + 2000;
    for (let k = 0; k < strangers; k++) {
      const address = `10.${(k >> 16) & 255}.${(k >> 8) & 255}.${k & 255}`;
      await a.inject({ url: '/v1/sites', remoteAddress: address });
      if (k % 1000 === 0) expect((await get(a, `Bearer ${DEMO_TOKENS.reader}`)).statusCode).toBe(429);
    }
    expect((await get(a, `Bearer ${DEMO_TOKENS.reader}`)).statusCode).toBe(429);
    // A new stranger still gets its own allowance, and then is refused too.
    const fresh = [];
    for (let k = 0; k < PER_MINUTE + 1; k++) fresh.push((await get(a, undefined, '192.0.2.200')).statusCode);
    expect(fresh.slice(-1)).toEqual([429]);
  }, 120_000);

  it('lets a caller in again once its minute is over, and not before', async () => {
    vi.useFakeTimers({ toFake: ['Date'] });
    vi.setSystemTime(new Date('2027-03-04T06:00:00Z'));
    const a = await limitedApp();
    for (let k = 0; k < PER_MINUTE; k++) expect((await get(a, `Bearer ${DEMO_TOKENS.reader}`)).statusCode).toBe(200);
    vi.setSystemTime(new Date('2027-03-04T06:00:59Z'));
    expect((await get(a, `Bearer ${DEMO_TOKENS.reader}`)).statusCode).toBe(429);
    vi.setSystemTime(new Date('2027-03-04T06:01:00Z'));
    expect((await get(a, `Bearer ${DEMO_TOKENS.reader}`)).statusCode).toBe(200);
  });

  it('keeps liveness, readiness and metrics outside the limit', async () => {
    const a = await limitedApp(1);
    expect((await get(a, `Bearer ${DEMO_TOKENS.reader}`)).statusCode).toBe(200);
    expect((await get(a, `Bearer ${DEMO_TOKENS.reader}`)).statusCode).toBe(429);
    for (const url of ['/healthz', '/readyz', '/metrics']) {
      for (let k = 0; k < 3; k++) expect((await a.inject({ url, remoteAddress: REMOTE, headers: { authorization: `Bearer ${DEMO_TOKENS.reader}` } })).statusCode).toBe(200);
    }
  });
});
