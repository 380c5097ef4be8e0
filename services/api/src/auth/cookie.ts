/**
 * The session cookie's flags. HttpOnly: no script reads it. SameSite=Strict: no other site's page
 * sends it (with JSON-only bodies, the CSRF guard). Secure: only over https; 'auto' sets it when
 * the request came over https, directly or as a trusted proxy's X-Forwarded-Proto says (fastify's
 * request.protocol believes that header only from the ISENTROPE_TRUST_PROXY addresses).
 */
import type { CookieSerializeOptions } from '@fastify/cookie';
import type { FastifyRequest } from 'fastify';
import { SESSION_TTL_MS } from './credentials.js';

export type CookieSecureSetting = 'auto' | 'always' | 'never';

export function sessionCookieOptions(
  setting: CookieSecureSetting | undefined,
  request: Pick<FastifyRequest, 'protocol'>,
): CookieSerializeOptions {
  const secure = setting === 'always' || ((setting ?? 'auto') === 'auto' && request.protocol === 'https');
  return { httpOnly: true, sameSite: 'strict', secure, path: '/', maxAge: SESSION_TTL_MS / 1000 };
}
