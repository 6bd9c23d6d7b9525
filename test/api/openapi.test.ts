import { afterEach, describe, expect, it } from 'vitest';
import { renderDocsPage } from '../../src/api/docs-page.js';
import type { ApiApp } from '../../src/api/http.js';
import type { Role } from '../../src/config/schema.js';
import { buildTestApp, demoConfig, DEMO_TOKENS, examplePlan } from '../helpers.js';

/**
 * The OpenAPI document is made from the routes' schemas, so it lists what each
 * route really answers: a route is called with each kind of bad input and every
 * status it gives must be among those it documents. Answers are validated
 * against their schemas on the way out.
 */
let app: ApiApp | null = null;
afterEach(async () => {
  await app?.close();
  app = null;
});

interface Operation {
  description?: string;
  parameters?: { name: string; in: string }[];
  requestBody?: unknown;
  responses: Record<string, unknown>;
}
type Paths = Record<string, Record<string, Operation>>;

const REMOTE = '203.0.113.7';
const ROLES: Role[] = ['reader', 'scheduler', 'feeder', 'operator'];
const bearer = (role: Role) => ({ authorization: `Bearer ${DEMO_TOKENS[role]}` });

/** The roles a route's description names ("Needs a bearer token with the `a` or `b` role."). */
function rolesOf(op: Operation): Role[] {
  const m = /Needs a bearer token with the (.+?) role/.exec(op.description ?? '');
  return m ? ROLES.filter((r) => m[1]!.includes(`\`${r}\``)) : [];
}

async function documentedApp(perMinute = 1000): Promise<{ app: ApiApp; paths: Paths }> {
  const config = demoConfig((raw) => {
    const service = raw['service'] as Record<string, unknown>;
    service['rateLimitPerMinute'] = perMinute;
    service['bodyLimitBytes'] = 4096;
  });
  app = (await buildTestApp({ config })).app;
  const doc = (await app.inject({ url: '/v1/openapi.json' })).json<{ paths: Paths }>();
  return { app, paths: doc.paths };
}

describe('the OpenAPI document', () => {
  it('documents every status each route answers to bad input: no token, the wrong role, bad parameters, query or body, a wrong media type, an oversized body', async () => {
    const { app: a, paths } = await documentedApp();
    const undocumented: string[] = [];
    const seen = new Set<number>();
    for (const [path, ops] of Object.entries(paths)) {
      for (const [method, op] of Object.entries(ops)) {
        const roles = rolesOf(op);
        const right = roles.length > 0 ? bearer(roles[0]!) : {};
        const wrong = ROLES.find((r) => !roles.includes(r));
        const longIds = path.replace(/\{[^}]+\}/g, 'x'.repeat(200));
        const someIds = path.replace(/\{[^}]+\}/g, 'unknown-1');
        const probes: { what: string; url: string; headers?: Record<string, string>; payload?: string }[] = [
          { what: 'no token', url: someIds },
          ...(roles.length > 0 && wrong ? [{ what: 'wrong role', url: someIds, headers: bearer(wrong) }] : []),
          { what: 'bad path parameters', url: longIds, headers: right },
          { what: 'over-long path parameters', url: path.replace(/\{[^}]+\}/g, 'x'.repeat(300)), headers: right },
          { what: 'unknown query parameter', url: `${someIds}?zzz=1`, headers: right },
        ];
        if (method === 'post') {
          probes.push(
            { what: 'bad body', url: someIds, headers: { ...right, 'content-type': 'application/json' }, payload: '{"zzz": 1}' },
            { what: 'not JSON', url: someIds, headers: { ...right, 'content-type': 'application/json' }, payload: '{"zzz": ' },
            { what: 'wrong media type', url: someIds, headers: { ...right, 'content-type': 'application/xml' }, payload: '<a/>' },
            { what: 'oversized body', url: someIds, headers: { ...right, 'content-type': 'application/json' }, payload: `{"x": "${'y'.repeat(8000)}"}` },
          );
        }
        for (const probe of probes) {
          const res = await a.inject({ method: method.toUpperCase() as 'GET' | 'POST', url: probe.url, remoteAddress: REMOTE, headers: probe.headers ?? {}, ...(probe.payload === undefined ? {} : { payload: probe.payload }) });
          seen.add(res.statusCode);
          if (!(String(res.statusCode) in op.responses)) undocumented.push(`${method.toUpperCase()} ${path}, ${probe.what}: ${res.statusCode}`);
        }
      }
    }
    expect(undocumented).toEqual([]);
    for (const status of [400, 401, 403, 404, 413, 414, 415]) expect(seen).toContain(status);
  });

  it('documents 429 on every route the rate limit covers, and the limit answers it', async () => {
    const { app: a, paths } = await documentedApp(1);
    const url = '/v1/sites';
    expect(paths[url]!['get']!.responses).toHaveProperty('429');
    await a.inject({ url, headers: bearer('reader'), remoteAddress: REMOTE });
    expect((await a.inject({ url, headers: bearer('reader'), remoteAddress: REMOTE })).statusCode).toBe(429);
    for (const probe of ['/healthz', '/readyz', '/metrics']) expect(paths[probe]!['get']!.responses).not.toHaveProperty('429');
  });

  it('lists for the lease route the answers it gives besides 200, 404 and 409', async () => {
    const { paths } = await documentedApp();
    expect(Object.keys(paths['/v1/requests/{id}/lease']!['post']!.responses).sort()).toEqual(['200', '400', '401', '403', '404', '409', '413', '414', '415', '429', '500', '503']);
  });

  it('describes shared shapes once, as components the routes refer to', async () => {
    const { app: a } = await documentedApp();
    const doc = (await a.inject({ url: '/v1/openapi.json' })).json<{ components: { schemas: Record<string, unknown> } }>();
    for (const name of ['Error', 'Request', 'Plan', 'IntakeResult', 'Site', 'Observation', 'EphemerisRow']) expect(doc.components.schemas).toHaveProperty(name);
    const text = JSON.stringify(doc);
    expect(text).toContain('"$ref":"#/components/schemas/Request"');
    expect(text).toContain('"$ref":"#/components/schemas/Error"');
  });

  it('validates answers on the way out: a stored request whose plan lacks its format answers 500, not a malformed document', async () => {
    const built = await buildTestApp({});
    app = built.app;
    const { plan } = { plan: examplePlan() };
    delete (plan as Record<string, unknown>)['format'];
    built.store.notices.recordNotice({
      sender: 'Example Survey (invented)', noticeId: 'n1', objectId: 'ZX27A01', source: 'test', receivedAt: '2027-03-04T05:00:00Z', issuedAt: '2027-03-04T05:00:00Z',
      raw: '{}', kind: 'observations', retractionReason: null, orbitJson: null, observations: [],
    });
    const [id] = built.store.requests.saveAssessment({
      objectId: 'ZX27A01', createdAt: '2027-03-04T05:30:00Z', observations: 2, summary: {},
      requests: [{ siteId: 'lantern-ridge', kind: 'photometry', score: 50, windowStart: '2027-03-04T06:10:00Z', windowEnd: '2027-03-04T09:00:00Z', recommendedStart: '2027-03-04T06:15:00Z', expiresAt: '2027-03-04T09:00:00Z', body: plan }],
    }).created;
    const res = await app.inject({ url: `/v1/requests/${id}`, headers: bearer('reader') });
    expect(res.statusCode).toBe(500);
    expect(res.json()).toEqual({ error: { code: 'internal', message: 'internal error; see the service log', details: null } });
  });
});

describe('the readable docs page', () => {
  it('renders the descriptions\' Markdown, carries both cautions and has no scripts', async () => {
    const { app: a } = await documentedApp();
    const res = await a.inject({ url: '/v1/docs' });
    expect(res.headers['content-type']).toContain('text/html');
    expect(res.headers['content-security-policy']).toContain("default-src 'none'");
    // `from` in a description becomes code, not backticks shown as they are.
    expect(res.body).toContain('open at <code>from</code>');
    expect(res.body).not.toMatch(/`from`/);
    expect(res.body).toContain('interlocks');
    expect(res.body).toContain('They are not impact predictions');
    expect(res.body).not.toMatch(/<script|\son[a-z]+=/i);
  });

  it('escapes every text it shows, quotes and apostrophes included, and keeps raw HTML in a description as text', () => {
    const html = renderDocsPage({
      info: { title: "nightjar's <b>API</b>", version: '1 & 2' },
      paths: {
        "/v1/it's": {
          get: {
            summary: 'a "quoted" summary',
            description: 'Some `code` and <script>alert(1)</script>',
            parameters: [{ name: "o'clock\"<x>", in: 'query', description: 'a `value`' }],
            responses: { '200': { description: "it's <i>fine</i>" } },
          },
        },
      },
    });
    expect(html).not.toContain("nightjar's");
    expect(html).not.toContain("o'clock");
    expect(html).not.toContain("/v1/it's");
    expect(html).not.toContain('<b>API</b>');
    expect(html).not.toContain('<script>alert');
    expect(html).not.toContain('<i>fine</i>');
    expect(html).toContain('<code>code</code>');
    expect(html).toMatch(/o(&apos;|&#39;)clock&quot;&lt;x&gt;/);
  });
});
