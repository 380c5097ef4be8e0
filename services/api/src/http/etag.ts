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

/**
 * Send a large JSON body already serialised once: the ETag is taken from the same string, and the
 * string goes out as is (the route's response schema still documents it in OpenAPI; validating a
 * thousand buckets on every request cost more than the query, services/api/bench/api.bench.ts).
 */
export function sendJsonWithEtag(request: FastifyRequest, reply: FastifyReply, body: unknown): FastifyReply {
  const json = JSON.stringify(body);
  const tag = `"${createHash('sha1').update(json).digest('base64url').slice(0, 27)}"`;
  reply.header('etag', tag);
  reply.header('cache-control', 'private, no-cache');
  const inm = request.headers['if-none-match'];
  if (inm !== undefined && (inm === '*' || inm.split(',').some((t) => t.trim().replace(/^W\//, '') === tag)))
    return reply.code(304).send();
  return reply.type('application/json; charset=utf-8').send(json);
}
