import type { FastifyInstance, FastifyReply, FastifyRequest } from 'fastify';
import { z } from 'zod';
import { toValidationIssues } from '../config/issues.js';
import type { Role } from '../config/schema.js';
import { requireRole, type Caller, type TokenEntry } from './auth.js';
import { ApiError } from './errors.js';

/**
 * One route: its documentation and its validation in one place, so the
 * OpenAPI document is generated from the same zod schemas that check input.
 */
export interface RouteSpec<P extends z.ZodType, Q extends z.ZodType, B extends z.ZodType> {
  method: 'GET' | 'POST';
  /** fastify path, e.g. /v1/requests/:id */
  url: string;
  tag: string;
  summary: string;
  description?: string;
  /** null: open to anyone; a list: one of these roles suffices. */
  role: Role | readonly Role[] | null;
  /** GET routes may be open to loopback callers when the config says so. */
  readsOpenOnLoopback?: boolean;
  /** A page or picture for a browser: takes the token from `?token=` too (see auth.ts). */
  acceptsPageToken?: boolean;
  params?: P;
  query?: Q;
  body?: B;
  /** Raw text body (notices): documented as JSON, validated by the handler. */
  rawBody?: boolean;
  responses: Record<number, { description: string; schema?: z.ZodType }>;
  produces?: string;
  handler: (ctx: {
    request: FastifyRequest;
    reply: FastifyReply;
    caller: Caller | null;
    params: z.infer<P>;
    query: z.infer<Q>;
    body: z.infer<B>;
  }) => Promise<unknown>;
}

export type AnyRouteSpec = RouteSpec<z.ZodType, z.ZodType, z.ZodType>;

function validate<T extends z.ZodType>(schema: T | undefined, value: unknown, where: string): z.infer<T> {
  if (!schema) return undefined as z.infer<T>;
  const r = schema.safeParse(value);
  if (!r.success) {
    const details = toValidationIssues(r.error).map((i) => ({ ...i, path: i.path === '(root)' ? where : `${where}.${i.path}` }));
    throw new ApiError(400, 'bad_request', `invalid ${where}: ${details.map((d) => `${d.path}: ${d.message}`).join('; ')}`, details);
  }
  return r.data;
}

export function defineRoute<P extends z.ZodType, Q extends z.ZodType, B extends z.ZodType>(spec: RouteSpec<P, Q, B>): AnyRouteSpec {
  return spec as unknown as AnyRouteSpec;
}

function hasBody(request: FastifyRequest): boolean {
  const length = request.headers['content-length'];
  return request.headers['transfer-encoding'] !== undefined || (length !== undefined && length !== '0');
}

/** Registers routes on the app with auth (from the headers, before the body is read) and validation. */
export function registerRoutes(
  app: FastifyInstance,
  routes: readonly AnyRouteSpec[],
  auth: { tokens: readonly TokenEntry[]; openReadsOnLoopback: boolean; pageTokenOf?: (request: FastifyRequest) => string | null },
): void {
  const callers = new WeakMap<FastifyRequest, Caller | null>();
  for (const spec of routes) {
    app.route({
      method: spec.method,
      url: spec.url,
      // Who is calling is settled from the headers alone, before any body is read: an unknown caller's body is never read.
      onRequest: async (request, reply) => {
        try {
          callers.set(
            request,
            spec.role === null
              ? null
              : requireRole(request, auth.tokens, spec.role, {
                  openOnLoopback: spec.method === 'GET' && spec.readsOpenOnLoopback === true && auth.openReadsOnLoopback,
                  pageToken: auth.pageTokenOf ? auth.pageTokenOf(request) : null,
                  acceptsPageToken: spec.method === 'GET' && spec.acceptsPageToken === true,
                }),
          );
        } catch (err) {
          // The unread body would otherwise be drained from the connection after the answer.
          if (hasBody(request)) reply.header('connection', 'close');
          throw err;
        }
      },
      handler: async (request, reply) => {
        const caller = callers.get(request) ?? null;
        const params = validate(spec.params, request.params, 'params');
        const query = validate(spec.query, request.query, 'query');
        let body: unknown;
        if (spec.rawBody) body = request.body;
        else if (spec.body) {
          let parsed: unknown = request.body;
          if (Buffer.isBuffer(parsed)) parsed = parsed.toString('utf8');
          if (typeof parsed === 'string') {
            try {
              parsed = parsed.trim() === '' ? {} : (JSON.parse(parsed) as unknown);
            } catch (err) {
              throw new ApiError(400, 'bad_request', `body is not valid JSON: ${(err as Error).message}`);
            }
          }
          body = validate(spec.body, parsed, 'body');
        }
        return spec.handler({ request, reply, caller, params, query, body });
      },
    });
  }
}

/** The fastify path `/v1/requests/:id` as OpenAPI `/v1/requests/{id}`. */
export function openApiPath(url: string): string {
  return url.replace(/:([A-Za-z0-9_]+)/g, '{$1}');
}

function jsonSchema(schema: z.ZodType, io: 'input' | 'output'): Record<string, unknown> {
  const s = z.toJSONSchema(schema, { io, unrepresentable: 'any' }) as Record<string, unknown>;
  delete s['$schema'];
  return s;
}

function roleSentence(spec: AnyRouteSpec): string {
  if (spec.role === null) return 'Open to anyone.';
  const roles = typeof spec.role === 'string' ? [spec.role] : spec.role;
  const open = spec.method === 'GET' && spec.readsOpenOnLoopback ? ' Open to loopback callers when `openReadsOnLoopback` is set.' : '';
  const page = spec.method === 'GET' && spec.acceptsPageToken ? ' A browser may give the token as `?token=` instead; the page passes it on to its pictures and links.' : '';
  return `Needs a bearer token with the ${roles.map((r) => `\`${r}\``).join(' or ')} role.${open}${page}`;
}

/** Builds the OpenAPI 3.1 document from the route specs. */
export function openApiDocument(routes: readonly AnyRouteSpec[], info: { title: string; version: string; description: string }): object {
  const paths: Record<string, Record<string, unknown>> = {};
  for (const spec of routes) {
    const path = openApiPath(spec.url);
    const parameters: unknown[] = [];
    for (const [where, schema] of [
      ['path', spec.params],
      ['query', spec.query],
    ] as const) {
      if (!schema) continue;
      const js = jsonSchema(schema, 'input') as { properties?: Record<string, Record<string, unknown>>; required?: string[] };
      for (const [name, prop] of Object.entries(js.properties ?? {})) {
        parameters.push({
          name,
          in: where,
          required: where === 'path' || (js.required ?? []).includes(name),
          description: typeof prop['description'] === 'string' ? prop['description'] : undefined,
          schema: prop,
        });
      }
    }
    const responses: Record<string, unknown> = {};
    for (const [status, r] of Object.entries(spec.responses)) {
      responses[status] = r.schema
        ? { description: r.description, content: { [spec.produces ?? 'application/json']: { schema: jsonSchema(r.schema, 'output') } } }
        : { description: r.description };
    }
    const operation: Record<string, unknown> = {
      tags: [spec.tag],
      summary: spec.summary,
      description: [spec.description, roleSentence(spec)].filter(Boolean).join('\n\n'),
      operationId: `${spec.method.toLowerCase()}${path.replace(/[{}]/g, '').replace(/[^A-Za-z0-9]+(.)/g, (_m, c: string) => c.toUpperCase())}`,
      parameters,
      responses,
      ...(spec.role ? { security: [{ bearer: [] }] } : {}),
    };
    if (spec.body || spec.rawBody) {
      operation['requestBody'] = {
        required: true,
        content: spec.body
          ? { 'application/json': { schema: jsonSchema(spec.body, 'input') } }
          : { 'application/json': { schema: {} }, 'application/ndjson': { schema: {} }, 'application/x-ndjson': { schema: {} } },
      };
    }
    paths[path] = { ...(paths[path] ?? {}), [spec.method.toLowerCase()]: operation };
  }
  return {
    openapi: '3.1.0',
    info,
    servers: [{ url: '/' }],
    components: {
      securitySchemes: { bearer: { type: 'http', scheme: 'bearer', description: 'A token from the service configuration (stored there as its SHA-256).' } },
    },
    paths,
  };
}
