import { REPLAN_POLICY } from '../../src/jobs/assessment-runner.js';
import fc from 'fast-check';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { FastifyInstance } from 'fastify';
import { identifierProblem, DESIGNATION_RULE } from '../../src/intake/identifiers.js';
import type { Store } from '../../src/store/index.js';
import { buildTestApp, DEMO_TOKENS, exampleNotice, fixedClock } from '../helpers.js';

const NOW = '2027-03-04T06:00:00Z';
let app: FastifyInstance;
let store: Store;
beforeAll(async () => {
  ({ app, store } = await buildTestApp({ clock: fixedClock(NOW) }));
});
afterAll(async () => {
  await app.close();
});

/** JSON text nested `depth` levels, of arrays or objects. */
const deepText = fc.record({ depth: fc.integer({ min: 10, max: 30_000 }), objects: fc.boolean() }).map(({ depth, objects }) =>
  objects ? `${'{"a":'.repeat(depth)}1${'}'.repeat(depth)}` : `${'['.repeat(depth)}${']'.repeat(depth)}`,
);

/** A lone surrogate or a non-character, as a JSON escape or raw. */
const badUnicode = fc.constantFrom('\\ud800', '\\udfff', '\\ud83d', '\\ud800\\ud800', '\ufffe', '\u202e', '\u200b', '\u0000', '\\u0000', '\ud83d\ude00');

/** A valid notice with one identifier or text replaced by bad Unicode (as JSON text). */
const badUnicodeNotice = fc
  .record({ field: fc.constantFrom('objectId', 'noticeId', 'sender', 'reason'), bad: badUnicode, prefix: fc.string({ maxLength: 5 }), id: fc.nat() })
  .map(({ field, bad, prefix, id }) => {
    const n = exampleNotice({ noticeId: `fz-${id}` });
    if (field === 'reason') {
      n['retracted'] = true;
      delete n['observations'];
    }
    n[field] = '@@BAD@@';
    return JSON.stringify(n).replace('"@@BAD@@"', `"${JSON.stringify(prefix).slice(1, -1)}${bad}"`);
  });

/** Bytes that are not UTF-8: random bytes, a UTF-16 or UTF-32 mark, Latin-1 text. */
const badBytes = fc.oneof(
  fc.uint8Array({ minLength: 0, maxLength: 600 }).map((b) => Buffer.from(b)),
  fc.constantFrom(Buffer.from([0xff, 0xfe]), Buffer.from([0xfe, 0xff, 0, 0x7b]), Buffer.from([0, 0, 0xfe, 0xff])).map((b) => Buffer.concat([b, Buffer.from(JSON.stringify(exampleNotice()), 'utf16le')])),
  fc.constant(Buffer.from(JSON.stringify(exampleNotice({ sender: 'Observat\u00e9 (invented)' })), 'latin1')),
);

const payload = fc.oneof(
  deepText.map((t) => Buffer.from(t)),
  badUnicodeNotice.map((t) => Buffer.from(t)),
  badBytes,
  fc.tuple(deepText, fc.nat()).map(([t, id]) => Buffer.from(JSON.stringify(exampleNotice({ noticeId: `fz-deep-${id}` })).replace('"sigma":0.5', `"sigma":0.5,"x":${t}`))),
  fc.jsonValue({ maxDepth: 6 }).map((v) => Buffer.from(JSON.stringify(v) ?? 'null')),
);

const mediaType = fc.constantFrom('application/json', 'application/ndjson', 'application/x-ndjson', 'text/plain', 'application/json; charset=utf-16');

describe('the service under fuzzed notices', () => {
  it('never answers 5xx to deep nesting, bad Unicode or bad bytes, and keeps answering (400 cases)', async () => {
    await fc.assert(
      fc.asyncProperty(payload, mediaType, async (body, type) => {
        const res = await app.inject({ method: 'POST', url: '/v1/notices', headers: { authorization: `Bearer ${DEMO_TOKENS.feeder}`, 'content-type': type }, payload: body });
        return res.statusCode < 500;
      }),
      { numRuns: 400, seed: 20270304 },
    );
    for (const url of ['/healthz', '/readyz', '/v1/objects', '/v1/notices', '/v1/rejections', '/metrics']) {
      expect((await app.inject({ url })).statusCode, url).toBe(200);
    }
    // Nothing that was stored breaks a later replan, and every stored designation keeps the rule.
    expect(() => store.work.enqueueReplans(new Date(NOW), REPLAN_POLICY)).not.toThrow();
    for (const o of store.objects.listObjects({ limit: 1000 })) expect(identifierProblem(o.designation, DESIGNATION_RULE), o.designation).toBeNull();
    const ok = await app.inject({ method: 'POST', url: '/v1/notices', headers: { authorization: `Bearer ${DEMO_TOKENS.feeder}` }, payload: exampleNotice({ noticeId: 'after-fuzz', objectId: 'ZX27F01' }) });
    expect(ok.statusCode).toBe(202);
  });
});
