import fc from 'fast-check';
import { describe, it } from 'vitest';
import { parseNotice } from '../../src/intake/notice.js';
import { splitJsonPayload, splitNdjsonPayload } from '../../src/intake/payload.js';
import { exampleNotice } from '../helpers.js';

const NOW = new Date('2027-03-04T06:00:00Z');
const anyJson = fc.jsonValue({ maxDepth: 4 });

/** A valid notice with one field replaced by an arbitrary JSON value (or removed). */
const mutatedNotice = fc
  .record({
    key: fc.constantFrom('format', 'noticeId', 'objectId', 'issuedAt', 'sender', 'observer', 'observations', 'orbit', 'retracted', 'reason', '__proto__', 'extra'),
    obsKey: fc.constantFrom('t', 'ra', 'dec', 'sigma', 'mag', 'band', 'observer'),
    where: fc.constantFrom('top', 'observation'),
    value: fc.option(anyJson, { nil: undefined }),
  })
  .map(({ key, obsKey, where, value }) => {
    const n = exampleNotice();
    if (where === 'top') {
      if (value === undefined) delete n[key];
      else Object.defineProperty(n, key, { value, enumerable: true, writable: true, configurable: true });
    } else {
      const obs = (n['observations'] as Record<string, unknown>[])[0]!;
      if (value === undefined) delete obs[obsKey];
      else obs[obsKey] = value;
    }
    return n;
  });

function wellFormed(result: ReturnType<typeof parseNotice>): boolean {
  if (result.ok) return true;
  return result.issues.length > 0 && result.issues.every((i) => typeof i.path === 'string' && i.path.length > 0 && i.message.length > 0);
}

describe('intake parser under fuzzing', () => {
  it('answers every arbitrary JSON value with a notice or a list of reasons naming fields (10 000 cases)', () => {
    fc.assert(
      fc.property(anyJson, (value) => wellFormed(parseNotice(value, { now: NOW, checkAge: true }))),
      { numRuns: 10_000, seed: 20270304 },
    );
  });

  it('answers every one-field mutation of a valid notice without throwing (10 000 cases)', () => {
    fc.assert(
      fc.property(mutatedNotice, (n) => wellFormed(parseNotice(n, { now: NOW, checkAge: true }))),
      { numRuns: 10_000, seed: 7 },
    );
  });

  it('only accepts notices whose numbers are finite and inside their ranges', () => {
    fc.assert(
      fc.property(mutatedNotice, (n) => {
        const r = parseNotice(n, { now: NOW, checkAge: true });
        if (!r.ok) return true;
        return (r.notice.observations ?? []).every(
          (o) => Number.isFinite(o.ra) && o.ra >= 0 && o.ra < 360 && o.dec >= -90 && o.dec <= 90 && o.sigma > 0,
        );
      }),
      { numRuns: 2_000, seed: 11 },
    );
  });

  it('splits any text into items without throwing', () => {
    fc.assert(
      fc.property(fc.string({ maxLength: 300 }), (text) => {
        const items = [...splitJsonPayload(text), ...splitNdjsonPayload(text)];
        return items.length > 0 && items.every((i) => (i.ok ? true : i.issues.length > 0));
      }),
      { numRuns: 10_000, seed: 3 },
    );
  });

  it('never lets a __proto__ key change Object.prototype', () => {
    fc.assert(
      fc.property(anyJson, (value) => {
        const text = `{"__proto__": ${JSON.stringify(value) ?? 'null'}, "format": "nightjar.notice.v1"}`;
        for (const item of splitJsonPayload(text)) if (item.ok) parseNotice(item.value, { now: NOW, checkAge: true });
        return Object.keys(Object.prototype).length === 0;
      }),
      { numRuns: 1_000, seed: 5 },
    );
  });
});
