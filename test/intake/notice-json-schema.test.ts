import { readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { Ajv2020 } from 'ajv/dist/2020.js';
import { afterEach, describe, expect, it } from 'vitest';
import { PROJECT_ROOT } from '../../src/config/load.js';
import type { ApiApp } from '../../src/api/http.js';
import { NOTICE_SCHEMA_PATH, noticeJsonSchema } from '../../src/intake/notice-json-schema.js';
import { parseNotice } from '../../src/intake/notice.js';
import { simulateNight } from '../../src/planning/simulate.js';
import { buildTestApp, exampleNotice } from '../helpers.js';

/**
 * The notice format as JSON Schema, generated from the schema intake uses, so a
 * feeder can check what it sends. Checked here with Ajv (a JSON Schema validator
 * that shares nothing with zod): what intake takes, the schema takes.
 * `NIGHTJAR_WRITE_SCHEMAS=1 npx vitest run test/intake/notice-json-schema.test.ts`
 * rewrites docs/notice.schema.json after a change to the notice schema.
 */
const DOCS_COPY = join(PROJECT_ROOT, 'docs', 'notice.schema.json');
const published = `${JSON.stringify(noticeJsonSchema(), null, 2)}\n`;
if (process.env['NIGHTJAR_WRITE_SCHEMAS'] === '1') writeFileSync(DOCS_COPY, published);

const validate = new Ajv2020({ strict: false, allErrors: true }).compile(noticeJsonSchema());

/** Every notice of the demo files (JSON objects, arrays and NDJSON lines). */
function demoNotices(): unknown[] {
  const dir = join(PROJECT_ROOT, 'config', 'demo', 'notices');
  return readdirSync(dir).flatMap((f) => {
    const text = readFileSync(join(dir, f), 'utf8');
    if (f.endsWith('.ndjson')) return text.split('\n').filter((l) => l.trim() !== '').map((l) => JSON.parse(l) as unknown);
    const value = JSON.parse(text) as unknown;
    return Array.isArray(value) ? value : [value];
  });
}

let app: ApiApp | null = null;
afterEach(async () => {
  await app?.close();
  app = null;
});

describe('the notice format as JSON Schema', () => {
  it('is published by the service, and docs/notice.schema.json is the same document', async () => {
    app = (await buildTestApp({})).app;
    const res = await app.inject({ url: NOTICE_SCHEMA_PATH });
    expect(res.statusCode).toBe(200);
    expect(res.headers['content-type']).toContain('application/schema+json');
    expect(res.body).toBe(published);
    expect(readFileSync(DOCS_COPY, 'utf8')).toBe(published);
  });

  it('is draft 2020-12 with the published path as its $id and the rules it cannot express in its description', () => {
    const schema = noticeJsonSchema();
    expect(schema['$schema']).toBe('https://json-schema.org/draft/2020-12/schema');
    expect(schema['$id']).toBe('/v1/schemas/notice.json');
    expect(schema['description']).toMatch(/at least 2 observations spanning at least 10 minutes, in time order/);
  });

  it('takes every notice intake takes: the demo files, the example notice and simulated notices (Ajv)', () => {
    const simulated = [false, true].flatMap((withOrbit) => simulateNight({ now: new Date('2027-03-04T06:00:00Z'), count: 6, seed: 3, withOrbit }).map((s) => s.notice));
    const notices = [...demoNotices(), exampleNotice(), ...simulated];
    expect(notices.length).toBeGreaterThan(15);
    for (const n of notices) {
      expect(parseNotice(n, { now: new Date('2030-01-01T00:00:00Z'), checkAge: false }).ok).toBe(true);
      expect(validate(n), JSON.stringify(validate.errors)).toBe(true);
    }
  });

  it("refuses what a single field's rule refuses, as intake does: a declination of 95, an unknown field, another format, a missing observer", () => {
    const bad = [
      exampleNotice({ observations: [{ t: '2027-03-04T04:12:33Z', ra: 151.2, dec: 95, sigma: 0.5 }] }),
      exampleNotice({ colour: 'blue' }),
      exampleNotice({ format: 'nightjar.notice.v2' }),
      (({ observer: _o, ...rest }) => rest)(exampleNotice()),
      exampleNotice({ observations: [{ t: '2027-03-04 04:12:33', ra: 151.2, dec: 5, sigma: 0.5 }] }),
    ];
    for (const n of bad) {
      expect(validate(n)).toBe(false);
      expect(parseNotice(n, { now: new Date('2030-01-01T00:00:00Z'), checkAge: false }).ok).toBe(false);
    }
  });
});
