import { createHash, timingSafeEqual } from 'node:crypto';
import type { FastifyPluginAsync } from 'fastify';
import type { ApiContext } from '../context.js';
import { ApiError } from '../errors.js';

const digest = (text: string) => createHash('sha256').update(text).digest();

/** True when the Authorization header carries the token; compared in constant time (as hashes). */
export function bearerMatches(header: string | undefined, token: string): boolean {
  const given = /^Bearer\s+(\S+)$/i.exec(header ?? '')?.[1];
  return given !== undefined && timingSafeEqual(digest(given), digest(token));
}

/**
 * GET /metrics in the Prometheus text format: the API's request counter and latency histogram
 * (by method, route pattern and status), plus every gauge other services registered. Public
 * unless a metrics token is configured (ISENTROPE_METRICS_TOKEN); then it needs that bearer token.
 */
const plugin: FastifyPluginAsync<{ ctx: ApiContext }> = async (app, { ctx }) => {
  const requests = ctx.metrics.counter('isentrope_http_requests_total', 'HTTP requests answered by the API.');
  const latency = ctx.metrics.histogram(
    'isentrope_http_request_duration_seconds',
    'Time from request received to response sent [s].',
  );
  app.addHook('onResponse', async (request, reply) => {
    // The route pattern, not the URL, keeps the label set small.
    const route = request.routeOptions.url ?? 'unmatched';
    const labels = { method: request.method, route, status: String(reply.statusCode) };
    requests.inc(labels);
    latency.observe(reply.elapsedTime / 1000, { method: request.method, route });
  });
  const token = ctx.metricsToken;
  app.get('/metrics', { schema: { hide: true }, config: { role: 'public' } }, async (request, reply) => {
    if (token !== undefined && !bearerMatches(request.headers.authorization, token))
      throw new ApiError('API_BAD_METRICS_TOKEN');
    return reply.type('text/plain; version=0.0.4; charset=utf-8').send(await ctx.metrics.render());
  });
};
(plugin as unknown as Record<symbol, boolean>)[Symbol.for('skip-override')] = true;
export const metricsRoutes = plugin;
