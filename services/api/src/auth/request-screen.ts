/**
 * Checks every request passes before anything else runs: the Host must be ours (host-rule.ts),
 * and the path must be one a browser or client sends for a real resource. Doubled slashes, dot
 * segments (plain or percent-encoded), encoded slashes or backslashes and encoded control characters (NUL and the like; raw ones the HTTP parser refuses) name no route
 * of ours; they are path-traversal and filter-evasion probes (RFC 3986 §5.2.4 removes dot segments
 * before a path is used, so a well-behaved client never sends one). They are answered 404 and
 * logged at debug only: a scanner must not fill the log or see a 500.
 */
import type { FastifyError, FastifyInstance, FastifyReply, FastifyRequest } from 'fastify';
import { ApiError } from '../errors.js';
import { sendProblem } from '../http/problems.js';
import { type HostRule, hostAllowed } from './host-rule.js';

/** True for a path no resource of ours has (see the module comment); the query is not looked at. */
export function isOddPath(rawUrl: string): boolean {
  const path = rawUrl.split('?', 1)[0] ?? '';
  if (!path.startsWith('/') || path.includes('//') || /%2f|%5c|\\|%[01][0-9a-f]/i.test(path)) return true;
  return path.split('/').some((segment) => /^(\.|%2e){1,2}$/i.test(segment));
}

function notFound(request: FastifyRequest): ApiError {
  return new ApiError('API_ROUTE_NOT_FOUND', { method: request.method, url: request.url });
}

export function installRequestScreen(app: FastifyInstance, rule: HostRule): void {
  app.addHook('onRequest', async (request) => {
    if (!hostAllowed(request.host, rule)) throw new ApiError('API_MISDIRECTED_HOST', { host: request.host });
    if (isOddPath(request.raw.url ?? '')) {
      request.log.debug({ url: request.raw.url }, 'odd path refused with 404');
      throw notFound(request);
    }
  });
}

/**
 * Fastify's own answer to a URL it cannot decode (FST_ERR_BAD_URL, e.g. '/%'), as fastify's
 * frameworkErrors option: the same 404 problem as any odd path, logged at debug.
 */
export function answerUndecodableUrl(
  error: FastifyError,
  request: FastifyRequest,
  reply: FastifyReply,
): void {
  request.log.debug({ url: request.raw.url, code: error.code }, 'undecodable URL refused with 404');
  void sendProblem(reply, request, notFound(request));
}
