import type { FastifyInstance, FastifyPluginAsync } from 'fastify';
import type { ApiContext } from '../context.js';
import { ApiError } from '../errors.js';
import { principalForSecret, requireRole, TOKEN_PREFIX } from './credentials.js';
import type { Principal } from './roles.js';

export const SESSION_COOKIE = 'isentrope_session';

/**
 * Resolves the caller on every request (bearer token, else session cookie, else the anonymous
 * role) and enforces the route's least role (config.role, default 'viewer'): every route is
 * protected unless it says 'public'. Registered without encapsulation so its hooks reach all routes.
 */
const plugin: FastifyPluginAsync<{ ctx: ApiContext }> = async (app: FastifyInstance, { ctx }) => {
  app.decorateRequest('principal', undefined);
  const anonymous: Principal | undefined =
    ctx.anonymousRole === undefined
      ? undefined
      : { kind: 'anonymous', username: 'anonymous', role: ctx.anonymousRole };

  app.addHook('preHandler', async (request) => {
    const header = request.headers.authorization;
    const need =
      request.routeOptions.config.role ??
      (request.url.startsWith('/api/') && !request.url.startsWith('/api/docs') ? 'viewer' : 'public');
    let principal: Principal | undefined;
    if (header !== undefined) {
      const match = /^Bearer\s+(\S+)$/i.exec(header);
      const secret = match?.[1];
      const known = secret?.startsWith(TOKEN_PREFIX) === true;
      // A public route may carry a bearer token of its own (the ingest push token): not ours to judge.
      if (!known && need === 'public') {
        request.principal = anonymous;
        return;
      }
      if (secret === undefined || !known) throw new ApiError('API_BAD_TOKEN');
      principal = await principalForSecret(ctx.pool, secret, 'token');
      if (principal === undefined) throw new ApiError('API_BAD_TOKEN');
    } else {
      const session = request.cookies[SESSION_COOKIE];
      if (session !== undefined && session !== '')
        principal = await principalForSecret(ctx.pool, session, 'session');
      // A stale cookie falls back to anonymous access (or to 401 below), never to an error page.
    }
    request.principal = principal ?? anonymous;
    if (need !== 'public') requireRole(request.principal, need);
  });
};
// Same effect as fastify-plugin: the hook applies to the whole app, not only inside this plugin.
(plugin as unknown as Record<symbol, boolean>)[Symbol.for('skip-override')] = true;
export const authPlugin = plugin;
