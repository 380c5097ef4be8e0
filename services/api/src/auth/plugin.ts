import type { FastifyInstance, FastifyPluginAsync, FastifyRequest } from 'fastify';
import type { ApiContext } from '../context.js';
import { ApiError } from '../errors.js';
import { principalForSecret, requireRole, TOKEN_PREFIX } from './credentials.js';
import type { Principal, Role } from './roles.js';

export const SESSION_COOKIE = 'isentrope_session';

/** The least role a request needs: the route's config.role, else viewer for the API, public for the rest. */
function neededRole(request: FastifyRequest): Role | 'public' {
  return (
    request.routeOptions.config.role ??
    (request.url.startsWith('/api/') && !request.url.startsWith('/api/docs') ? 'viewer' : 'public')
  );
}

/**
 * The caller: bearer token, else session cookie, else the anonymous principal. undefined (not
 * signed in) for a public route's own bearer token, which is that route's to judge.
 */
async function resolvePrincipal(
  ctx: ApiContext,
  request: FastifyRequest,
  need: Role | 'public',
  anonymous: Principal | undefined,
): Promise<Principal | undefined> {
  const header = request.headers.authorization;
  if (header !== undefined) {
    const secret = /^Bearer\s+(\S+)$/i.exec(header)?.[1];
    const known = secret?.startsWith(TOKEN_PREFIX) === true;
    // A public route may carry a bearer token of its own (the ingest push token): not ours to judge.
    if (!known && need === 'public') return anonymous;
    if (secret === undefined || !known) throw new ApiError('API_BAD_TOKEN');
    const principal = await principalForSecret(ctx.pool, secret, 'token');
    if (principal === undefined) throw new ApiError('API_BAD_TOKEN');
    return principal;
  }
  const session = request.cookies[SESSION_COOKIE];
  // A stale cookie falls back to anonymous access (or to 401), never to an error page.
  const principal =
    session !== undefined && session !== ''
      ? await principalForSecret(ctx.pool, session, 'session')
      : undefined;
  return principal ?? anonymous;
}

/**
 * Resolves the caller on every request and enforces the route's least role (config.role, default
 * 'viewer'): every route is protected unless it says 'public'. The check runs before the body is
 * read or validated, so a caller without the role learns nothing of the schema and
 * costs no parsing. Registered without encapsulation so its hooks reach all routes.
 */
const plugin: FastifyPluginAsync<{ ctx: ApiContext }> = async (app: FastifyInstance, { ctx }) => {
  app.decorateRequest('principal', undefined);
  // Anonymous visitors read at most: every change needs a signed-in user (issue 18).
  const anonymous: Principal | undefined =
    ctx.anonymousRole === undefined
      ? undefined
      : { kind: 'anonymous', username: 'anonymous', role: 'viewer' };
  // preParsing: after every onRequest hook (the rate limit counts the request first), before the body is read.
  app.addHook('preParsing', async (request, _reply, payload) => {
    const need = neededRole(request);
    request.principal = await resolvePrincipal(ctx, request, need, anonymous);
    if (need !== 'public') requireRole(request.principal, need);
    return payload;
  });
};
// Same effect as fastify-plugin: the hook applies to the whole app, not only inside this plugin.
(plugin as unknown as Record<symbol, boolean>)[Symbol.for('skip-override')] = true;
export const authPlugin = plugin;
