import { createHash, timingSafeEqual } from 'node:crypto';
import type { FastifyRequest } from 'fastify';
import type { Role } from '../config/schema.js';
import { ApiError } from './errors.js';

export interface TokenEntry {
  name: string;
  sha256: string;
  roles: readonly Role[];
}

export interface Caller {
  name: string;
  roles: readonly Role[];
}

export function sha256Hex(text: string): string {
  return createHash('sha256').update(text).digest('hex');
}

/** Finds the token whose hash matches, comparing every entry in constant time. */
export function identify(tokens: readonly TokenEntry[], bearer: string): Caller | null {
  const presented = Buffer.from(sha256Hex(bearer), 'hex');
  let found: Caller | null = null;
  for (const t of tokens) {
    const expected = Buffer.from(t.sha256, 'hex');
    if (expected.length === presented.length && timingSafeEqual(expected, presented) && found === null) {
      found = { name: t.name, roles: t.roles };
    }
  }
  return found;
}

function bearerOf(request: FastifyRequest): string | null {
  const header = request.headers.authorization;
  if (typeof header !== 'string') return null;
  const m = /^Bearer\s+(\S+)\s*$/i.exec(header);
  return m ? m[1]! : null;
}

export function isLoopback(ip: string): boolean {
  return ip === '::1' || ip.startsWith('127.') || ip.startsWith('::ffff:127.');
}

/**
 * Checks the caller has `role` (or one of them). 401 without a token or with an unknown
 * one, 403 with a token lacking the role. Reads may be open on loopback when configured.
 */
export function requireRole(
  request: FastifyRequest,
  tokens: readonly TokenEntry[],
  role: Role | readonly Role[],
  options: { openOnLoopback?: boolean } = {},
): Caller {
  const wanted: readonly Role[] = typeof role === 'string' ? [role] : role;
  const bearer = bearerOf(request);
  if (bearer === null) {
    if (options.openOnLoopback && isLoopback(request.ip)) return { name: 'loopback', roles: ['reader'] };
    throw new ApiError(401, 'unauthenticated', 'send "Authorization: Bearer <token>"');
  }
  const caller = identify(tokens, bearer);
  if (!caller) throw new ApiError(401, 'unauthenticated', 'unknown token');
  if (!wanted.some((r) => caller.roles.includes(r)))
    throw new ApiError(403, 'forbidden', `this token (${caller.name}) lacks the ${wanted.map((r) => `"${r}"`).join(' or ')} role`, {
      required: wanted,
      has: caller.roles,
    });
  return caller;
}
