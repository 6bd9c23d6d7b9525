import { describe, expect, it } from 'vitest';
import { DESIGNATION_RULE, SENDER_RULE } from '../../src/intake/identifiers.js';
import { MAX_OBSERVATIONS, parseNotice } from '../../src/intake/notice.js';
import { exampleNotice } from '../helpers.js';

const NOW = new Date('2027-03-04T06:00:00Z');
const opts = { now: NOW, checkAge: true };

function reasons(raw: unknown, options = opts): string[] {
  const r = parseNotice(raw, options);
  return r.ok ? [] : r.issues.map((i) => `${i.path}: ${i.message}`);
}

function withObservation(index: number, patch: Record<string, unknown>) {
  const n = exampleNotice();
  const list = n['observations'] as Record<string, unknown>[];
  list[index] = { ...list[index], ...patch };
  return n;
}

describe('notice v1', () => {
  it('accepts the example notice of the design notes', () => {
    const r = parseNotice(exampleNotice(), opts);
    expect(r.ok).toBe(true);
  });

  it('accepts an orbit block with H and G', () => {
    const orbit = { epoch: '2027-03-01T00:00:00Z', q: 0.91, e: 0.32, i: 7.5, node: 120.1, peri: 48.7, tp: '2027-02-10T12:00:00Z', H: 25.1, G: 0.15 };
    expect(parseNotice(exampleNotice({ orbit }), opts).ok).toBe(true);
  });

  it.each([
    ['RA of 360', { ra: 360 }, 'observations[0].ra: expected a number < 360'],
    ['negative RA', { ra: -0.0001 }, 'observations[0].ra: expected a number >= 0'],
    ['Dec beyond the pole', { dec: 90.0001 }, 'observations[0].dec: expected a number <= 90'],
    ['zero sigma', { sigma: 0 }, 'observations[0].sigma: expected a number > 0'],
    ['RA as a string', { ra: '151.2' }, 'observations[0].ra: expected number, received string'],
    ['a time without zone', { t: '2027-03-04T04:12:33' }, 'observations[0].t: expected an ISO-8601 UTC time such as 2027-03-04T05:06:07Z'],
    ['an unknown band', { band: 'Q' }, 'observations[0].band'],
  ])('rejects %s, naming the field', (_label, patch, expected) => {
    const got = reasons(withObservation(0, patch));
    expect(got).toHaveLength(1);
    expect(got[0]).toContain(expected);
  });

  it.each([
    ['observer latitude', { observer: { lat: 91, lon: 0, height: 0 } }, 'observer.lat: expected a number <= 90'],
    ['observer longitude', { observer: { lat: 0, lon: 181, height: 0 } }, 'observer.lon: expected a number <= 180'],
    ['observer height', { observer: { lat: 0, lon: 0, height: 20000 } }, 'observer.height: expected a number <= 10000'],
    ['format', { format: 'nightjar.notice.v0' }, 'format: expected "nightjar.notice.v1"'],
    ['an empty sender', { sender: '' }, `sender: is empty; expected ${SENDER_RULE.rule}`],
    ['a very long objectId', { objectId: 'X'.repeat(65) }, `objectId: has 65 characters; expected ${DESIGNATION_RULE.rule}`],
    ['a control character', { sender: 'bad\u0007sender' }, `sender: contains U+0007 at position 3, which is not allowed; expected ${SENDER_RULE.rule}`],
    ['an unknown field', { extra: 1 }, '(root): unknown field(s): extra'],
  ])('rejects a bad %s, naming the field', (_label, patch, expected) => {
    expect(reasons(exampleNotice(patch))).toEqual([expected]);
  });

  it('rejects a __proto__ key instead of merging it', () => {
    const raw = JSON.parse('{"__proto__": {"polluted": true}}') as Record<string, unknown>;
    const got = reasons({ ...exampleNotice(), ...raw });
    expect(got.join('\n')).toContain('unknown field(s): __proto__');
    expect(({} as Record<string, unknown>)['polluted']).toBeUndefined();
  });

  it('rejects a single observation', () => {
    const n = exampleNotice();
    (n['observations'] as unknown[]).splice(1);
    expect(reasons(n)).toEqual(['observations: expected at least 2 observations (or an orbit block), got 1']);
  });

  it('accepts an orbit block without observations (an ephemeris needs no tracklet then)', () => {
    const orbit = { epoch: '2027-03-01T00:00:00Z', q: 0.91, e: 0.32, i: 7.5, node: 120.1, peri: 48.7, tp: '2027-02-10T12:00:00Z' };
    const n = exampleNotice({ orbit });
    delete n['observations'];
    expect(reasons(n)).toEqual([]);
  });

  it('still wants two observations beside an orbit block that brings some', () => {
    const orbit = { epoch: '2027-03-01T00:00:00Z', q: 0.91, e: 0.32, i: 7.5, node: 120.1, peri: 48.7, tp: '2027-02-10T12:00:00Z' };
    const n = exampleNotice({ orbit });
    (n['observations'] as unknown[]).splice(1);
    expect(reasons(n)).toEqual(['observations: expected at least 2 observations, got 1']);
  });

  it('rejects an arc shorter than ten minutes', () => {
    expect(reasons(withObservation(1, { t: '2027-03-04T04:17:33.120Z' }))).toEqual([
      'observations: observations span 5.0 min; at least 10 min is needed',
    ]);
  });

  it('rejects observations out of time order', () => {
    expect(reasons(withObservation(1, { t: '2027-03-04T03:12:33.120Z' }))).toEqual([
      'observations[1].t: observations must be in time order (earlier than the one before)',
    ]);
  });

  it('rejects a time more than five minutes after the clock', () => {
    expect(reasons(exampleNotice({ issuedAt: '2027-03-04T06:06:00Z' }))[0]).toMatch(/^issuedAt: time .* is in the future/);
  });

  it('accepts a time within the five-minute tolerance', () => {
    expect(reasons(exampleNotice({ issuedAt: '2027-03-04T06:04:00Z' }))).toEqual([]);
  });

  it('rejects times before 1990', () => {
    expect(reasons(exampleNotice({ issuedAt: '1989-12-31T23:59:59Z' }))).toEqual(['issuedAt: time 1989-12-31T23:59:59Z is before 1990-01-01T00:00:00Z']);
  });

  it('skips the age checks when asked (ad-hoc command-line use)', () => {
    expect(reasons(exampleNotice({ issuedAt: '2030-01-01T00:00:00Z' }), { now: NOW, checkAge: false })).toEqual([]);
  });

  it('accepts a retraction with a reason and no observations', () => {
    const n = exampleNotice({ retracted: true, reason: 'identified with a known object' });
    delete n['observations'];
    expect(reasons(n)).toEqual([]);
  });

  it('rejects a retraction without a reason', () => {
    const n = exampleNotice({ retracted: true });
    delete n['observations'];
    expect(reasons(n)).toEqual(['reason: a retraction needs a reason']);
  });

  it('rejects too many observations', () => {
    const n = exampleNotice();
    const one = (n['observations'] as unknown[])[0];
    n['observations'] = Array.from({ length: MAX_OBSERVATIONS + 1 }, () => one);
    expect(reasons(n)[0]).toBe(`observations: expected at most ${MAX_OBSERVATIONS} items`);
  });

  it('rejects NaN and Infinity smuggled in as numbers', () => {
    expect(reasons(withObservation(0, { dec: Number.NaN }))[0]).toMatch(/^observations\[0\]\.dec:/);
    expect(reasons(withObservation(0, { sigma: Number.POSITIVE_INFINITY }))[0]).toMatch(/^observations\[0\]\.sigma:/);
  });
});
