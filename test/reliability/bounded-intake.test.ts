import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { AngleBetween, Vector } from 'astronomy-engine';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import type { CommandIo } from '../../src/commands/io.js';
import { main as plan } from '../../src/commands/plan.js';
import { MAX_OBSERVATIONS } from '../../src/intake/notice.js';
import { MAX_ARC_DAYS, MAX_OBJECT_OBSERVATIONS, separationArcsec } from '../../src/intake/tracklet-rules.js';
import { exampleNotice, memoryIntake } from '../helpers.js';

const NOW = '2027-03-04T06:00:00Z';
const CORPUS = join(import.meta.dirname, '..', 'fixtures', 'bad-notices');

const setup = () => memoryIntake(NOW);

/** `count` positions `stepMin` minutes apart ending at `endIso`, moving slowly. */
function positions(count: number, endIso: string, stepMin: number, raStart = 151.2): Record<string, unknown>[] {
  const end = Date.parse(endIso);
  return Array.from({ length: count }, (_, k) => ({
    t: new Date(end - (count - 1 - k) * stepMin * 60_000).toISOString(),
    ra: raStart + 0.0004 * k,
    dec: -12.3 + 0.0002 * k,
    sigma: 0.5,
  }));
}

describe('intake limits on what an assessment is given', () => {
  it('refuses a notice whose positions span 37 years, naming the limit', () => {
    const { store, send } = setup();
    const r = send(JSON.parse(readFileSync(join(CORPUS, 'span-37-years.json'), 'utf8')) as Record<string, unknown>);
    expect(r).toMatchObject({ status: 'rejected' });
    if (r.status === 'rejected') expect(r.reasons).toContainEqual({ path: 'observations', message: expect.stringContaining(`at most ${MAX_ARC_DAYS} days per object`) });
    expect(store.notices.counts().objects).toBe(0);
  });

  it('refuses a notice that would stretch a stored object beyond the span limit, and leaves the object as it was', () => {
    const { store, send } = setup();
    send(exampleNotice({ observations: positions(3, '2027-02-20T04:00:00Z', 20) }));
    const r = send(exampleNotice({ noticeId: 'later', observations: positions(3, '2027-03-04T04:00:00Z', 20) }));
    expect(r).toMatchObject({ status: 'rejected', reasons: [{ path: 'observations', message: expect.stringMatching(/^object ZX27A01 would span 12\.0 days .* at most 10 days/) }] });
    expect(store.objects.observations('ZX27A01')).toHaveLength(3);
  });

  it('refuses positions beyond the limits per notice and per object', () => {
    const { store, send } = setup();
    const tooMany = send(exampleNotice({ observations: positions(MAX_OBSERVATIONS + 1, '2027-03-04T05:00:00Z', 2) }));
    expect(tooMany).toMatchObject({ status: 'rejected', reasons: [{ path: 'observations', message: `expected at most ${MAX_OBSERVATIONS} items` }] });
    expect(send(exampleNotice({ noticeId: 'a', observations: positions(100, '2027-03-04T02:00:00Z', 1) })).status).toBe('accepted');
    expect(send(exampleNotice({ noticeId: 'b', observations: positions(100, '2027-03-04T04:00:00Z', 1) })).status).toBe('accepted');
    const third = send(exampleNotice({ noticeId: 'c', observations: positions(2, '2027-03-04T05:30:00Z', 10) }));
    expect(third).toMatchObject({
      status: 'rejected',
      reasons: [{ path: 'observations', message: `object ZX27A01 would hold ${MAX_OBJECT_OBSERVATIONS + 2} positions with this notice (200 stored + 2 new); at most ${MAX_OBJECT_OBSERVATIONS} per object` }],
    });
    expect(store.objects.observations('ZX27A01')).toHaveLength(MAX_OBJECT_OBSERVATIONS);
  });

  it('refuses the 37-year notice in the plan command at once instead of computing for minutes', async () => {
    const err: string[] = [];
    const io: CommandIo = { stdout: () => {}, stderr: (t) => err.push(t), env: {}, cwd: process.cwd() };
    const t0 = Date.now();
    expect(await plan(['--notice', join(CORPUS, 'span-37-years.json'), '--now', NOW], io)).not.toBe(0);
    expect(Date.now() - t0).toBeLessThan(10_000);
    expect(err.join('')).toContain(`at most ${MAX_ARC_DAYS} days per object`);
  });
});

describe('same-time positions', () => {
  it('refuses two positions at the same second from the same site 4.9 deg apart, naming both', () => {
    const { store, send } = setup();
    const r = send(
      exampleNotice({
        observations: [
          { t: '2027-03-04T04:12:33Z', ra: 151.2, dec: -12.3, sigma: 0.5 },
          { t: '2027-03-04T04:12:33Z', ra: 156.22, dec: -12.3, sigma: 0.5 },
          { t: '2027-03-04T04:42:33Z', ra: 151.21, dec: -12.31, sigma: 0.5 },
        ],
      }),
    );
    expect(r).toMatchObject({ status: 'rejected', reasons: [{ path: 'observations[1]', message: expect.stringMatching(/^observations\[1\] and observations\[0\] are at the same time \(2027-03-04T04:12:33\.000Z\) from the same place but 4\.9\d deg apart, more than 5 sigma/) }] });
    expect(store.notices.counts().notices).toBe(0);
  });

  it('refuses a position that disagrees with a stored one of the same time and place, naming the stored one', () => {
    const { store, send } = setup();
    send(exampleNotice());
    const [first] = exampleNotice()['observations'] as { t: string; ra: number; dec: number }[];
    const r = send(exampleNotice({ noticeId: 'again', observations: [{ ...first!, ra: first!.ra + 0.01, sigma: 0.5 }, { t: '2027-03-04T05:00:00Z', ra: 151.26, dec: -12.33, sigma: 0.5 }] }));
    expect(r).toMatchObject({ status: 'rejected', reasons: [{ path: 'observations[0]', message: expect.stringContaining('and the stored position at 2027-03-04T04:12:33.120Z (notice row 1) are at the same time') }] });
    expect(store.objects.observations('ZX27A01')).toHaveLength(2);
  });

  it('merges a same-time position that agrees within the combined sigma as one', () => {
    const { store, send } = setup();
    send(exampleNotice());
    const [first] = exampleNotice()['observations'] as { t: string; ra: number; dec: number }[];
    const r = send(exampleNotice({ noticeId: 'again', observations: [{ ...first!, ra: first!.ra + 0.5 / 3600, sigma: 0.5 }, { t: '2027-03-04T05:00:00Z', ra: 151.26, dec: -12.33, sigma: 0.5 }] }));
    expect(r).toMatchObject({ status: 'accepted', observationsAdded: 1 });
    expect(store.objects.observations('ZX27A01')).toHaveLength(3);
  });

  it('measures separations as astronomy-engine\'s AngleBetween does: within 1 mas above 10 arcsec, within 0.05 arcsec below (where the reference resolves no finer)', () => {
    // Reference: astronomy-engine AngleBetween of the two unit vectors (an independent formula: the arc-cosine of the dot product).
    const unit = (raDeg: number, decDeg: number) => {
      const r = (raDeg * Math.PI) / 180;
      const d = (decDeg * Math.PI) / 180;
      return new Vector(Math.cos(d) * Math.cos(r), Math.cos(d) * Math.sin(r), Math.sin(d), new Date(0) as never);
    };
    fc.assert(
      fc.property(
        fc.double({ min: 0, max: 359.999, noNaN: true }),
        fc.double({ min: -89.9, max: 89.9, noNaN: true }),
        fc.double({ min: -5, max: 5, noNaN: true }),
        fc.double({ min: -5, max: 5, noNaN: true }),
        (ra, dec, dra, ddec) => {
          const dec2 = Math.max(-90, Math.min(90, dec + ddec));
          const ours = separationArcsec(ra, dec, ra + dra, dec2);
          const reference = AngleBetween(unit(ra, dec), unit(ra + dra, dec2)) * 3600;
          // The arc-cosine loses precision below about 1 arcsec (cos of 1e-6 rad is 1 - 5e-13); compare there only to its own resolution.
          const tolerance = reference > 10 ? 1e-3 : 0.05;
          return Math.abs(ours - reference) < tolerance;
        },
      ),
      { numRuns: 2000, seed: 20270304 },
    );
  });
});
