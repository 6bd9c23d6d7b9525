import { z } from 'zod';
import { renderPointingChart } from '../../views/pointing-chart.js';
import { buildTonightChart, renderTonightChart } from '../../views/tonight-chart.js';
import type { ApiContext } from '../context.js';
import { currentLocalDate, reviewData } from '../review-data.js';
import { document, json, type ApiApp } from '../http.js';
import { errorSchema, idParams, isoTime } from '../schemas.js';

/** Pictures for review: tonight at a site as a timeline, and where to point for an object. */

export { currentLocalDate };

export const READ_ROLES = ['reader', 'operator', 'scheduler'] as const;
const SVG_TYPE = 'image/svg+xml; charset=utf-8';

export const siteIdSchema = z
  .string()
  .regex(/^[a-z0-9][a-z0-9-]{0,31}$/, 'expected a site id: lower-case letters, digits and hyphens')
  .describe('site id from the configuration');
/** Documented for the pages and pictures; the service takes it out of the address before routing (src/api/app.ts). */
export const pageTokenParam = z.string().max(256).optional().describe('a reader token, for a browser that cannot send an Authorization header; a page passes it on to its pictures and links');

const tonightQuery = z
  .object({
    date: z
      .string()
      .regex(/^\d{4}-\d{2}-\d{2}$/, 'expected a date as YYYY-MM-DD')
      .optional()
      .describe('local date (local mean time) whose evening starts the night; default: the night in progress or coming at the site'),
    token: pageTokenParam,
  })
  .strict();
const pointingQuery = z
  .object({
    site: siteIdSchema.optional().describe('the site seen from; default: the site of the object’s best open request, else the first configured site'),
    t: isoTime().optional().describe('ISO UTC instant; default: the start of the object’s next window at the site (now, if one is open)'),
    token: pageTokenParam,
  })
  .strict();

export function pictureRoutes(app: ApiApp, ctx: ApiContext): void {
  const data = reviewData(ctx);
  app.route({
    method: 'GET',
    url: '/v1/sites/:id/tonight.svg',
    config: { access: { role: READ_ROLES, readsOpenOnLoopback: true, acceptsPageToken: true } },
    schema: {
      tags: ['review'],
      summary: 'Tonight at a site as a timeline (SVG)',
      description: 'One row per object with queued or leased requests, best score first; UTC across with the site’s local time beside it. Each row shows the observable windows as bars (the line inside is the altitude) with the limit that closes each written at its end, and for each request its window, recommended start and expected duration. Day, twilight, dark and moonlit time are bands behind the rows; the hard limits and the horizon mask are listed beside.',
      params: idParams,
      querystring: tonightQuery,
      response: {
        200: document('SVG document', 'image/svg+xml'),
        400: json('bad date', errorSchema),
        404: json('unknown site', errorSchema),
        503: json('the on-demand estimate worker is busy past a short wait (or cannot start), or the service is stopping; retry-after says when to ask again', errorSchema),
      },
    },
    handler: async (request, reply) => {
      const { params, query } = request;
      const site = data.siteOr404(params.id);
      const { night, objects } = await data.tonight(site, query.date ?? currentLocalDate(site, ctx.clock()));
      const svg = renderTonightChart(buildTonightChart({ site, night, objects, now: ctx.clock() }));
      return reply.type(SVG_TYPE).header('cache-control', 'no-store').send(svg);
    },
  });
  app.route({
    method: 'GET',
    url: '/v1/objects/:id/pointing.svg',
    config: { access: { role: READ_ROLES, readsOpenOnLoopback: true, acceptsPageToken: true } },
    schema: {
      tags: ['review'],
      summary: 'Where to point for an object at a time (SVG)',
      description: 'Tangent-plane view around the nominal position, north up and east left: the uncertainty region as the density of the virtual orbits (cells holding 68 % and 99.7 % of them; without virtual orbits, the normal regions of the 1-sigma ellipse), the imager field, the slit at its position angle, the search pattern’s pointings, and the motion over the request’s duration, in a wide view and a close view at most half its width. States the altitude, airmass and Sun altitude at the time, and says when the object cannot be observed then. Without an orbit estimate the position comes from a request’s ephemeris table.',
      params: idParams,
      querystring: pointingQuery,
      response: {
        200: document('SVG document', 'image/svg+xml'),
        400: json('bad query', errorSchema),
        404: json('unknown object or site', errorSchema),
        422: json('no position for that time', errorSchema),
        503: json('the on-demand estimate worker is busy past a short wait (or cannot start), or the service is stopping; retry-after says when to ask again', errorSchema),
      },
    },
    handler: async (request, reply) => {
      const { params, query } = request;
      const input = await data.pointing(params.id, query.site, query.t ? new Date(query.t) : undefined);
      return reply.type(SVG_TYPE).header('cache-control', 'no-store').send(renderPointingChart(input));
    },
  });
}
