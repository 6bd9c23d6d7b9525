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
  /** The token as a page received it in its address (`?token=`), to pass on to its pictures and links. */
  pageToken?: string;
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
 * Who is calling, from the headers alone (before any body is read): the caller
 * of a known token, the loopback reader when reads are open there, or an
 * ApiError 401 without a token or with an unknown one. A page or picture may
 * take the token from its address instead (`pageToken`, for a browser, which
 * sends no Authorization header); other routes refuse a token given that way.
 */
export function authenticate(
  request: FastifyRequest,
  tokens: readonly TokenEntry[],
  options: { openOnLoopback?: boolean; pageToken?: string | null; acceptsPageToken?: boolean } = {},
): Caller | ApiError {
  const header = bearerOf(request);
  const fromPage = header === null && options.pageToken != null && options.pageToken !== '';
  if (fromPage && !options.acceptsPageToken) {
    return new ApiError(401, 'unauthenticated', 'a token in the address (?token=) is taken only by the review pages and pictures; send "Authorization: Bearer <token>"');
  }
  const bearer = fromPage ? options.pageToken! : header;
  if (bearer === null) {
    if (options.openOnLoopback && isLoopback(request.ip)) return { name: 'loopback', roles: ['reader'] };
    return new ApiError(401, 'unauthenticated', 'send "Authorization: Bearer <token>"');
  }
  const identified = identify(tokens, bearer);
  if (!identified) return new ApiError(401, 'unauthenticated', 'unknown token');
  return fromPage ? { ...identified, pageToken: bearer } : identified;
}

/** ApiError 403 unless the caller has `role` (or one of them); null when it has. */
export function lacksRole(caller: Caller, role: Role | readonly Role[]): ApiError | null {
  const wanted: readonly Role[] = typeof role === 'string' ? [role] : role;
  if (wanted.some((r) => caller.roles.includes(r))) return null;
  return new ApiError(403, 'forbidden', `this token (${caller.name}) lacks the ${wanted.map((r) => `"${r}"`).join(' or ')} role`, {
    required: wanted,
    has: caller.roles,
  });
}
