import type { IncomingMessage, ServerResponse } from 'node:http';
import type { FastifyBaseLogger, FastifyInstance, RawServerDefault } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import type { Role } from '../config/schema.js';
import type { Caller } from './auth.js';

/**
 * The fastify app as the routes see it: zod schemas give the handlers their
 * types, validate input (fastify-type-provider-zod's validator), validate and
 * serialise answers (its serializer), and feed the OpenAPI document
 * (@fastify/swagger through its transform).
 */
export type ApiApp = FastifyInstance<RawServerDefault, IncomingMessage, ServerResponse<IncomingMessage>, FastifyBaseLogger, ZodTypeProvider>;

/** Who may call a route: its `config.access`. */
export interface Access {
  /** null: open to anyone; a list: one of these roles suffices. */
  role: Role | readonly Role[] | null;
  /** GET routes may be open to loopback callers when the config says so. */
  readsOpenOnLoopback?: boolean;
  /** A page or picture for a browser: takes the token from `?token=` too (see auth.ts). */
  acceptsPageToken?: boolean;
  /** The body is kept as bytes for the handler (notices are stored as received), not parsed as JSON. */
  rawBody?: boolean;
}

declare module 'fastify' {
  interface FastifyContextConfig {
    access?: Access;
  }
  interface FastifyRequest {
    /** The verified caller (null on open routes and before the token is checked). */
    caller: Caller | null;
  }
}

/** A documented JSON answer. */
export function json<T extends z.ZodType>(description: string, schema: T) {
  return { description, content: { 'application/json': { schema } } };
}

/** A documented answer that is a document of another media type (HTML, SVG, text). */
export function document(description: string, mediaType: string) {
  return { description, content: { [mediaType]: { schema: z.string() } } };
}

/** A documented answer without a body (304). */
export function noBody(description: string) {
  return z.undefined().describe(description);
}
