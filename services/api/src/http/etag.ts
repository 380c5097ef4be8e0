import { createHash } from 'node:crypto';
import type { FastifyReply, FastifyRequest } from 'fastify';

/** A strong ETag of the JSON body (SHA-1, truncated: a cache key, not a security measure). */
export function etagOf(body: unknown): string {
  return `"${createHash('sha1').update(JSON.stringify(body)).digest('base64url').slice(0, 27)}"`;
}

/**
 * Set the ETag and answer 304 Not Modified when the client already holds this body
 * (If-None-Match, RFC 9110 section 13.1.2). Returns true when the 304 was sent.
 */
export function notModified(request: FastifyRequest, reply: FastifyReply, body: unknown): boolean {
  const tag = etagOf(body);
  reply.header('etag', tag);
  reply.header('cache-control', 'private, no-cache');
  const inm = request.headers['if-none-match'];
  if (inm === undefined) return false;
  const match = inm === '*' || inm.split(',').some((t) => t.trim().replace(/^W\//, '') === tag);
  if (match) reply.code(304).send();
  return match;
}
