import { readFileSync } from 'node:fs';
import { connect } from 'node:net';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import type { FastifyInstance } from 'fastify';
import { buildTestApp, DEMO_TOKENS, demoConfig, exampleNotice, fixedClock } from '../helpers.js';

const NOW = '2027-03-04T06:00:00Z';
const CORPUS = join(import.meta.dirname, '..', 'fixtures', 'bad-notices');
let app: FastifyInstance | null = null;
afterEach(async () => {
  await app?.close();
  app = null;
});

/** Sends raw bytes on a fresh connection and collects what comes back until the server closes it or `waitMs` passes. */
function rawExchange(port: number, head: string, bodyStart: string, waitMs: number): Promise<{ answer: string; closedByServer: boolean }> {
  return new Promise((resolve) => {
    const socket = connect(port, '127.0.0.1');
    let answer = '';
    let closedByServer = false;
    socket.on('data', (d) => (answer += d.toString()));
    socket.on('end', () => (closedByServer = true));
    socket.on('error', () => {});
    socket.write(head + bodyStart);
    setTimeout(() => {
      socket.destroy();
      resolve({ answer, closedByServer });
    }, waitMs);
  });
}

describe('HTTP edges', () => {
  it('answers 401 to a large body without a token before the body is sent, and closes the connection', async () => {
    ({ app } = await buildTestApp({ clock: fixedClock(NOW) }));
    const address = await app.listen({ host: '127.0.0.1', port: 0 });
    const port = Number(new URL(address).port);
    const length = 3.9 * 1024 * 1024;
    // Only the first bytes of the 3.9 MiB are sent: an answer can only come before the body is read.
    const { answer, closedByServer } = await rawExchange(
      port,
      `POST /v1/notices HTTP/1.1\r\nHost: x\r\nContent-Type: application/json\r\nContent-Length: ${Math.round(length)}\r\n\r\n`,
      '[{"format":',
      1500,
    );
    expect(answer).toMatch(/^HTTP\/1\.1 401/);
    expect(answer.toLowerCase()).toContain('connection: close');
    expect(closedByServer).toBe(true);
  });

  it('checks the role before the body too: 403 for a reader posting notices', async () => {
    ({ app } = await buildTestApp({ clock: fixedClock(NOW) }));
    const address = await app.listen({ host: '127.0.0.1', port: 0 });
    const { answer } = await rawExchange(
      Number(new URL(address).port),
      `POST /v1/notices HTTP/1.1\r\nHost: x\r\nAuthorization: Bearer ${DEMO_TOKENS.reader}\r\nContent-Type: application/json\r\nContent-Length: 1000000\r\n\r\n`,
      '{',
      1500,
    );
    expect(answer).toMatch(/^HTTP\/1\.1 403/);
  });

  it('keeps liveness, readiness and metrics out of a busy caller\'s rate limit', async () => {
    const config = demoConfig((raw) => {
      (raw['service'] as Record<string, unknown>)['rateLimitPerMinute'] = 5;
    });
    ({ app } = await buildTestApp({ clock: fixedClock(NOW), config }));
    const headers = { authorization: `Bearer ${DEMO_TOKENS.reader}` };
    const reads: number[] = [];
    for (let k = 0; k < 7; k++) reads.push((await app.inject({ url: '/v1/objects', headers })).statusCode);
    expect(reads.slice(-2)).toEqual([429, 429]);
    for (const url of ['/healthz', '/readyz', '/metrics']) {
      for (let k = 0; k < 10; k++) expect((await app.inject({ url, headers })).statusCode, url).toBe(200);
    }
  });

  it('accepts NDJSON sent as application/ndjson', async () => {
    ({ app } = await buildTestApp({ clock: fixedClock(NOW) }));
    const body = [exampleNotice(), exampleNotice({ noticeId: 'b', objectId: 'ZX27B01' })].map((n) => JSON.stringify(n)).join('\n');
    const res = await app.inject({
      method: 'POST',
      url: '/v1/notices',
      headers: { authorization: `Bearer ${DEMO_TOKENS.feeder}`, 'content-type': 'application/ndjson' },
      payload: body,
    });
    expect(res.statusCode).toBe(202);
    expect(res.json()).toMatchObject({ accepted: 2, rejected: 0 });
  });

  it('names the encoding of a UTF-16 payload in the refusal', async () => {
    ({ app } = await buildTestApp({ clock: fixedClock(NOW) }));
    const res = await app.inject({
      method: 'POST',
      url: '/v1/notices',
      headers: { authorization: `Bearer ${DEMO_TOKENS.feeder}`, 'content-type': 'application/json' },
      payload: readFileSync(join(CORPUS, 'utf16-with-bom.json')),
    });
    expect(res.statusCode).toBe(422);
    expect(res.json().results[0].reasons[0]).toEqual({ path: '(body)', message: 'payload is UTF-16LE (byte-order mark FF FE), not UTF-8; re-encode it as UTF-8' });
    // The refusal keeps the text as decoded, so it can be read.
    expect((await app.inject({ url: `/v1/rejections/${res.json().results[0].rejectionId}` })).json().raw).toContain('"format": "nightjar.notice.v1"');
  });
});
