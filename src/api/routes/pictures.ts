import { z } from 'zod';
import type { Site } from '../../config/schema.js';
import { nightAt, type Night } from '../../sky/night.js';
import { parallacticAngleDeg } from '../../sky/site.js';
import type { RequestRow } from '../../store/requests.js';
import { renderHomePage, type HomeRequest, type HomeSite } from '../../views/home-page.js';
import { buildNightChart, nightChartSpan, renderNightChart, sampleTimes, type NightObjectInput } from '../../views/night-chart.js';
import { planFacts, rowAt, type PlanRow } from '../../views/request-plan.js';
import { renderSkyChart, type SkyChartInput } from '../../views/sky-chart.js';
import type { ApiContext } from '../context.js';
import { CAUTIONS } from '../docs-page.js';
import { ApiError } from '../errors.js';
import { EstimateRefusedError } from '../on-demand.js';
import { defineRoute, type AnyRouteSpec } from '../route-spec.js';
import { errorSchema, idParams, isoTime } from '../schemas.js';

/** Pictures for review: the night at a site, an object on the sky, and the page that links them. */

const READ_ROLES = ['reader', 'operator', 'scheduler'] as const;
const SVG_TYPE = 'image/svg+xml; charset=utf-8';
/** Most virtual-orbit points drawn in the sky picture. */
const MAX_MEMBER_POINTS = 500;
const MS_PER_HOUR = 3_600_000;

const siteIdSchema = z.string().regex(/^[a-z0-9][a-z0-9-]{0,31}$/, 'expected a site id: lower-case letters, digits and hyphens').describe('site id from the configuration');
const nightQuery = z
  .object({
    date: z
      .string()
      .regex(/^\d{4}-\d{2}-\d{2}$/, 'expected a date as YYYY-MM-DD')
      .optional()
      .describe('local date (local mean time) whose evening starts the night; default: the night in progress or coming at the site'),
  })
  .strict();
const skyQuery = z
  .object({
    site: siteIdSchema.optional().describe('the site seen from; default: the site of the object’s best open request, else the first configured site'),
    t: isoTime().optional().describe('ISO UTC instant; default now'),
  })
  .strict();

/**
 * The local date (local mean time, UTC + east longitude / 15 h; the sky module's night rule)
 * whose night is in progress or comes next at the site: the night that began the previous
 * evening until its sunrise, then the coming one.
 */
export function currentLocalDate(site: Site, now: Date): string {
  const lon = site.location.lonDeg > 180 ? site.location.lonDeg - 360 : site.location.lonDeg;
  const local = new Date(now.getTime() + (lon / 15) * MS_PER_HOUR);
  if (local.getUTCHours() < 12) {
    const previous = new Date(local.getTime() - 24 * MS_PER_HOUR).toISOString().slice(0, 10);
    const night = nightAt(site, previous);
    const over = night.sunrise ?? night.span.end;
    if (now < over) return previous;
  }
  return local.toISOString().slice(0, 10);
}

export function pictureRoutes(ctx: ApiContext): AnyRouteSpec[] {
  const { config, store, clock } = ctx;

  const siteOr404 = (id: string): Site => {
    const site = config.sites.find((s) => s.id === id);
    if (!site) throw new ApiError(404, 'not_found', `no site ${id}; configured sites: ${config.sites.map((s) => s.id).join(', ')}`);
    return site;
  };

  const openRequests = (filter: { siteId?: string; objectId?: string }): RequestRow[] =>
    (['queued', 'leased'] as const)
      .flatMap((state) => store.requests.list({ state, limit: 500, ...filter }))
      .sort((a, b) => b.score - a.score || a.windowStart.localeCompare(b.windowStart) || a.id.localeCompare(b.id));

  /** An on-demand answer, or null when there is none or the estimator refuses (the pictures then use the request tables). */
  const orNull = async <T>(answer: Promise<T | null>): Promise<T | null> => {
    try {
      return await answer;
    } catch (err) {
      if (err instanceof EstimateRefusedError) return null;
      throw err;
    }
  };

  const nightOf = (site: Site, localDate: string): Night => {
    try {
      return nightAt(site, localDate);
    } catch (err) {
      throw new ApiError(400, 'bad_request', `invalid query: date: ${(err as Error).message}`, [{ path: 'query.date', message: (err as Error).message }]);
    }
  };

  const tableOf = (requests: readonly RequestRow[]): PlanRow[] => {
    const byT = new Map<string, PlanRow>();
    for (const r of requests) for (const row of planFacts(r.body).rows) if (!byT.has(row.t)) byT.set(row.t, row);
    return [...byT.values()].sort((a, b) => Date.parse(a.t) - Date.parse(b.t));
  };

  async function nightSvg(site: Site, localDate: string): Promise<string> {
    const night = nightOf(site, localDate);
    const { startUtc, endUtc } = nightChartSpan(night);
    const open = openRequests({ siteId: site.id }).filter((r) => Date.parse(r.windowEnd) > startUtc.getTime() && Date.parse(r.windowStart) < endUtc.getTime());
    const byObject = new Map<string, RequestRow[]>();
    for (const r of open) byObject.set(r.objectId, [...(byObject.get(r.objectId) ?? []), r]);
    const times = sampleTimes(startUtc, endUtc);
    const objects: NightObjectInput[] = [];
    for (const [objectId, requests] of byObject) {
      const answer = await orNull(ctx.onDemand.ephemeris(objectId, site.location, times));
      const track: NightObjectInput['track'] | null = answer ? answer.rows.map((row) => ({ t: new Date(row.t), altDeg: row.alt })) : null;
      objects.push({
        objectId,
        trackSource: track ? 'estimate' : 'request-table',
        track: track ?? tableOf(requests).map((row) => ({ t: new Date(row.t), altDeg: row.alt })),
        windows: requests.map((r) => ({ requestId: r.id, kind: r.kind, state: r.state, score: r.score, startUtc: new Date(r.windowStart), endUtc: new Date(r.windowEnd) })),
      });
    }
    return renderNightChart(buildNightChart({ site, localDate, night, objects, now: clock() }));
  }

  async function skySvg(objectId: string, siteId: string | undefined, t: Date): Promise<string> {
    if (!store.objects.getObject(objectId)) throw new ApiError(404, 'not_found', `no object ${objectId}`);
    const objectOpen = openRequests({ objectId });
    const site = siteOr404(siteId ?? objectOpen[0]?.siteId ?? config.sites[0]!.id);
    const atSite = objectOpen.filter((r) => r.siteId === site.id);
    // When the estimator refuses this time or site, the request tables below give the position.
    const view = await orNull(ctx.onDemand.skyView(objectId, site.location, t, MAX_MEMBER_POINTS));
    let position: { row: PlanRow; source: SkyChartInput['positionSource'] } | null = view?.row ? { row: view.row, source: 'estimate' } : null;
    const members: SkyChartInput['members'] = view?.row ? view.members : null;
    if (!position) {
      const candidates = atSite.length > 0 ? atSite : store.requests.list({ objectId, siteId: site.id, limit: 50 });
      const table = tableOf(candidates);
      const row = rowAt(table, t);
      if (!row) {
        const covered = table.length > 0 ? `${table[0]!.t} to ${table[table.length - 1]!.t}` : 'no times';
        throw new ApiError(
          422,
          'no_position',
          `no position for ${objectId} at ${t.toISOString()} from ${site.id}: no orbit estimate is available and its request tables at this site cover ${covered}`,
          [{ path: 'query.t', message: `expected a time covered by a request table (${covered})` }],
        );
      }
      position = { row, source: 'request-table' };
    }
    const { row } = position;
    let slit: SkyChartInput['slit'] = null;
    if (site.spectrograph) {
      const planned = atSite.filter((r) => r.kind === 'spectrum').map((r) => planFacts(r.body).slitArcsec).find((w) => w !== null);
      const widthArcsec = planned ?? Math.min(...site.spectrograph.slitWidthsArcsec);
      const paDeg = parallacticAngleDeg(site.location, t, row.ra, row.dec);
      slit = {
        widthArcsec,
        lengthArcsec: site.spectrograph.slitLengthArcsec,
        paDeg: ((paDeg % 180) + 180) % 180,
        paReason: `parallactic angle at t; ${planned !== null && planned !== undefined ? 'width from the spectrum request' : 'narrowest configured width'}`,
      };
    }
    return renderSkyChart({
      objectId,
      siteId: site.id,
      siteName: site.name,
      timeUtc: t,
      positionSource: position.source,
      raDeg: row.ra,
      decDeg: row.dec,
      raRate: row.raRate,
      decRate: row.decRate,
      vMag: row.mag,
      unc: row.unc,
      members,
      imagerFieldArcmin: site.imager.fieldArcmin,
      slit,
    });
  }

  function homePage(): string {
    const now = clock();
    const sites: HomeSite[] = config.sites.map((site) => {
      const requests: HomeRequest[] = openRequests({ siteId: site.id })
        .filter((r) => Date.parse(r.windowEnd) > now.getTime())
        .map((r) => {
          const facts = planFacts(r.body);
          const at = new Date(Math.max(now.getTime(), Date.parse(r.recommendedStart)));
          return {
            id: r.id,
            objectId: r.objectId,
            kind: r.kind,
            state: r.state,
            score: r.score,
            windowStartUtc: r.windowStart,
            windowEndUtc: r.windowEnd,
            recommendedStartUtc: r.recommendedStart,
            raRate: facts.raRate,
            decRate: facts.decRate,
            vMag: facts.vMag,
            skyPictureUrl: `/v1/objects/${encodeURIComponent(r.objectId)}/sky.svg?site=${encodeURIComponent(site.id)}&t=${encodeURIComponent(isoSeconds(at))}`,
            requestJsonUrl: `/v1/requests/${encodeURIComponent(r.id)}`,
            objectJsonUrl: `/v1/objects/${encodeURIComponent(r.objectId)}`,
          };
        });
      const localDate = currentLocalDate(site, now);
      return {
        id: site.id,
        name: site.name,
        latDeg: site.location.latDeg,
        lonDeg: site.location.lonDeg,
        localDate,
        nightPictureUrl: `/v1/sites/${encodeURIComponent(site.id)}/night.svg?date=${localDate}`,
        queueJsonUrl: `/v1/queue?site=${encodeURIComponent(site.id)}`,
        requests,
      };
    });
    return renderHomePage({
      title: 'nightjar',
      nowUtc: now,
      sites,
      cautions: CAUTIONS,
      links: [
        { href: '/v1/docs', text: 'API documentation' },
        { href: '/v1/openapi.json', text: 'OpenAPI document' },
        { href: '/v1/objects', text: 'objects (JSON)' },
        { href: '/v1/requests', text: 'requests (JSON)' },
      ],
    });
  }

  return [
    defineRoute({
      method: 'GET',
      url: '/v1/sites/:id/night.svg',
      tag: 'review',
      summary: 'The night at a site as a picture (SVG)',
      description:
        'Altitude against UTC (local sidereal time on the top axis) with twilight and the dark interval shaded, the Moon’s altitude and illumination, the altitude limit, and one curve per object with queued or leased requests, its windows drawn as bars labelled by object, kind and score.',
      role: READ_ROLES,
      readsOpenOnLoopback: true,
      params: idParams,
      query: nightQuery,
      produces: 'image/svg+xml',
      responses: {
        200: { description: 'SVG document', schema: z.string() },
        400: { description: 'bad date', schema: errorSchema },
        404: { description: 'unknown site', schema: errorSchema },
      },
      handler: async ({ params, query, reply }) => {
        const site = siteOr404(params.id);
        const svg = await nightSvg(site, query.date ?? currentLocalDate(site, clock()));
        return reply.type(SVG_TYPE).header('cache-control', 'no-store').send(svg);
      },
    }),
    defineRoute({
      method: 'GET',
      url: '/v1/objects/:id/sky.svg',
      tag: 'review',
      summary: 'An object on the sky at an instant as a picture (SVG)',
      description:
        'Tangent-plane view around the nominal position, north up and east left: virtual orbits as points (when the estimate has them), the 1- and 3-sigma ellipses, the imager field and the slit to scale, the motion over the next 10 minutes and a scale bar in arcsec. Without an orbit estimate the position comes from an open request’s ephemeris table.',
      role: READ_ROLES,
      readsOpenOnLoopback: true,
      params: idParams,
      query: skyQuery,
      produces: 'image/svg+xml',
      responses: {
        200: { description: 'SVG document', schema: z.string() },
        400: { description: 'bad query', schema: errorSchema },
        404: { description: 'unknown object or site', schema: errorSchema },
        422: { description: 'no position for that time', schema: errorSchema },
      },
      handler: async ({ params, query, reply }) => {
        const t = query.t ? new Date(query.t) : clock();
        const svg = await skySvg(params.id, query.site, t);
        return reply.type(SVG_TYPE).header('cache-control', 'no-store').send(svg);
      },
    }),
    defineRoute({
      method: 'GET',
      url: '/',
      tag: 'review',
      summary: 'The review page: sites, open requests, pictures and links (HTML, no scripts)',
      role: READ_ROLES,
      readsOpenOnLoopback: true,
      produces: 'text/html',
      responses: { 200: { description: 'HTML', schema: z.string() } },
      handler: async ({ reply }) => reply.type('text/html; charset=utf-8').header('cache-control', 'no-store').send(homePage()),
    }),
  ];
}

/** ISO UTC rounded up to the whole second (so it never falls before a window's first table row), for short links. */
function isoSeconds(t: Date): string {
  return `${new Date(Math.ceil(t.getTime() / 1000) * 1000).toISOString().slice(0, 19)}Z`;
}
