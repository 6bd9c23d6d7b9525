import { z } from 'zod';
import { localNightOf, nightAt } from '../../sky/night.js';
import type { ApiContext } from '../context.js';
import { json, type ApiApp } from '../http.js';

const interval = z.object({ start: z.string().describe('ISO UTC'), end: z.string().describe('ISO UTC') });

const siteView = z.object({
  id: z.string(),
  name: z.string(),
  location: z.object({ latDeg: z.number(), lonDeg: z.number().describe('east positive'), heightM: z.number() }),
  tonight: z
    .object({
      localDate: z.string().describe("date of the evening the night begins on (local mean solar time); the night runs from that local noon to the next"),
      nightSunAltitudeDeg: z.number().describe("the site's own limit: dark while the Sun's centre is below it"),
      dark: interval.nullable().describe('null when the Sun never gets that low'),
      darkHours: z.number(),
      moonUpDuringDark: z.array(interval),
      moonIlluminatedFraction: z.number(),
    })
    .describe('the night that contains now, or the coming one when now is after local noon'),
}).meta({ id: 'Site', description: 'A configured site with tonight\'s dark hours by its own limits.' });

/** The configured sites with tonight's dark hours by each site's own limits. */
export function siteRoutes(app: ApiApp, ctx: ApiContext): void {
  app.route({
    method: 'GET',
    url: '/v1/sites',
    config: { access: { role: ['reader', 'scheduler', 'operator'], readsOpenOnLoopback: true } },
    schema: {
      tags: ['queue'],
      summary: "The sites: ids, names, locations and tonight's dark hours",
      response: { 200: json('every configured site', z.object({ items: z.array(siteView) })) },
    },
    handler: async (_request) => {
      const now = ctx.clock();
      const iso = (t: Date) => t.toISOString();
      return {
        items: ctx.config.sites.map((site) => {
          const night = nightAt(site, localNightOf(now, site.location.lonDeg));
          return {
            id: site.id,
            name: site.name,
            location: site.location,
            tonight: {
              localDate: night.localDate,
              nightSunAltitudeDeg: night.nightSunAltitudeDeg,
              dark: night.dark === null ? null : { start: iso(night.dark.start), end: iso(night.dark.end) },
              darkHours: Math.round(night.darkH * 1000) / 1000,
              moonUpDuringDark: night.moon.upDuringDark.map((i) => ({ start: iso(i.start), end: iso(i.end) })),
              moonIlluminatedFraction: Math.round(night.moon.illuminatedFraction * 1000) / 1000,
            },
          };
        }),
      };
    },
  });
}
