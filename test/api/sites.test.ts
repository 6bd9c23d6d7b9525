import { Body, Observer, SearchAltitude } from 'astronomy-engine';
import { afterEach, describe, expect, it } from 'vitest';
import type { FastifyInstance } from 'fastify';
import { buildTestApp, DEMO_TOKENS, fixedClock } from '../helpers.js';

let app: FastifyInstance | null = null;
afterEach(async () => {
  await app?.close();
  app = null;
});

describe('GET /v1/sites', () => {
  it("lists every site with its id, name, location and tonight's dark hours", async () => {
    // 06:00 UTC is 22:49 local mean time at Lantern Ridge (107.62 deg W): the night of 2027-03-03.
    const built = await buildTestApp({ clock: fixedClock('2027-03-04T06:00:00Z') });
    app = built.app;
    const res = await app.inject({ url: '/v1/sites', headers: { authorization: `Bearer ${DEMO_TOKENS.scheduler}` } });
    expect(res.statusCode).toBe(200);
    const items = res.json().items as { id: string; name: string; location: object; tonight: { localDate: string; dark: { start: string; end: string }; darkHours: number } }[];
    expect(items.map((s) => s.id)).toEqual(built.config.sites.map((s) => s.id));
    const ridge = items[0]!;
    expect(ridge).toMatchObject({ name: 'Lantern Ridge Observatory (invented demo site)', location: { latDeg: 34.21, lonDeg: -107.62, heightM: 2310 } });
    expect(ridge.tonight.localDate).toBe('2027-03-03');
    // Independently: astronomy-engine's own altitude search for the Sun's centre at the site's -12 deg,
    // from local mean noon of 2027-03-03 (19:10:29 UTC).
    const observer = new Observer(34.21, -107.62, 2310);
    const noon = new Date(Date.UTC(2027, 2, 3, 12) + (107.62 / 15) * 3_600_000);
    const dusk = SearchAltitude(Body.Sun, observer, -1, noon, 1, -12)!.date;
    const dawn = SearchAltitude(Body.Sun, observer, +1, dusk, 1, -12)!.date;
    expect(Math.abs(Date.parse(ridge.tonight.dark.start) - dusk.getTime())).toBeLessThan(1000);
    expect(Math.abs(Date.parse(ridge.tonight.dark.end) - dawn.getTime())).toBeLessThan(1000);
    expect(ridge.tonight.darkHours).toBeCloseTo((dawn.getTime() - dusk.getTime()) / 3_600_000, 2);
  });
});
