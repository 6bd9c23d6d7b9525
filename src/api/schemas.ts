import { z } from 'zod';
import { REQUEST_KINDS } from '../domain/request-kind.js';
import { REQUEST_STATES, type RequestRow } from '../store/requests.js';
import { planSchema } from './plan-schema.js';

/** Shared zod schemas of the HTTP API: inputs are validated with them and the OpenAPI document is built from them. */

export const isoTime = () => z.iso.datetime({ offset: false, message: 'expected an ISO-8601 UTC time such as 2027-03-04T05:06:07Z' });

export const errorSchema = z
  .object({
    error: z.object({
      code: z.string().describe('machine-readable code, e.g. bad_request, unauthenticated, forbidden, not_found, lease_conflict'),
      message: z.string().describe('what went wrong, for a person'),
      details: z.unknown().describe('field issues [{path, message}] or other specifics; null when none'),
    }),
  })
  .meta({ id: 'Error', description: 'The one error shape of every route.' });

export const idParams = z.object({ id: z.string().min(1).max(128).describe('identifier') }).strict();

export const kindSchema = z.enum(REQUEST_KINDS as [string, ...string[]]).describe('photometry (light curve), colours or spectrum');
export const stateSchema = z
  .enum(REQUEST_STATES as [string, ...string[]])
  .describe('queued, leased, done, failed, lapsed (window passed unobserved), superseded (a newer assessment replaced it), withdrawn (operator or retraction)');

export const requestView = z
  .object({
    id: z.string().describe('stable while the request is revised in place; a new id only for a window of another night or another kind'),
    revision: z.number().int().describe('1 when proposed; each replan that changes it in place adds one'),
    revisedAt: z.string().nullable().describe('ISO UTC of the latest revision; null before any'),
    night: z.string().nullable().describe("local date (YYYY-MM-DD, local mean solar time) of the evening the window's night begins"),
    objectId: z.string(),
    siteId: z.string(),
    kind: kindSchema,
    state: stateSchema,
    score: z.number().describe('0-100; the factors are in plan.score'),
    window: z.object({ start: z.string().describe('ISO UTC'), end: z.string().describe('ISO UTC') }),
    recommendedStart: z.string().describe('ISO UTC'),
    expiresAt: z.string().describe('ISO UTC; after this the request lapses if not taken'),
    assessmentId: z.number().int(),
    supersededBy: z.string().nullable(),
    stateReason: z.string().nullable().describe('why it is in its state, in words'),
    lease: z.object({ holder: z.string(), expiresAt: z.string() }).nullable(),
    outcome: z.unknown().nullable(),
    plan: planSchema,
    createdAt: z.string(),
    updatedAt: z.string(),
  })
  .meta({ id: 'Request', description: 'An observation request. Positions are estimates with uncertainty, not impact predictions; the observatory decides what runs.' });

export function toRequestView(r: RequestRow) {
  return {
    id: r.id,
    revision: r.revision,
    revisedAt: r.revisedAt,
    night: r.night,
    objectId: r.objectId,
    siteId: r.siteId,
    kind: r.kind,
    state: r.state,
    score: r.score,
    window: { start: r.windowStart, end: r.windowEnd },
    recommendedStart: r.recommendedStart,
    expiresAt: r.expiresAt,
    assessmentId: r.assessmentId,
    supersededBy: r.supersededBy,
    stateReason: r.stateReason,
    lease: r.state === 'leased' && r.leaseHolder && r.leaseExpiresAt ? { holder: r.leaseHolder, expiresAt: r.leaseExpiresAt } : null,
    outcome: r.outcome,
    // The stored plan, as the planner wrote it; the answer's schema checks it on the way out.
    plan: r.body as z.output<typeof planSchema>,
    createdAt: r.createdAt,
    updatedAt: r.updatedAt,
  };
}

/**
 * The request view as JSON text with the stored plan spliced in unparsed: the plan
 * (ephemeris table and all) is most of the bytes, and re-encoding it is most of the cost.
 */
export function requestViewJson(row: Omit<RequestRow, 'body'>, bodyJson: string): string {
  const { plan: _plan, ...view } = toRequestView({ ...row, body: null });
  const head = JSON.stringify(view);
  return `${head.slice(0, -1)},"plan":${bodyJson}}`;
}

export const pageOf = <T extends z.ZodType>(item: T) =>
  z.object({ items: z.array(item), nextCursor: z.string().nullable().describe('pass as ?cursor= for the next page; null on the last') });

export const limitParam = z.coerce.number().int().min(1).max(500).default(50).describe('page size, 1-500');
