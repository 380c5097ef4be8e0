import type { FastifyPluginAsyncZod } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { appendAudit, inTransaction } from '../audit.js';
import { sessionCookieOptions } from '../auth/cookie.js';
import {
  checkLogin,
  createSession,
  endSession,
  newSecret,
  PASSWORD_CHECK_RATE_LIMIT,
  sha256Hex,
  TOKEN_PREFIX,
} from '../auth/credentials.js';
import {
  checkCurrentPassword,
  checkNewPassword,
  MIN_PASSWORD_LENGTH,
  storeNewPassword,
} from '../auth/password-change.js';
import { hashPassword } from '../auth/passwords.js';
import { SESSION_COOKIE } from '../auth/plugin.js';
import { hasRole, ROLES, type Role } from '../auth/roles.js';
import { createSignInLimiter, SIGN_IN_ACCOUNT_LIMIT } from '../auth/sign-in-limit.js';
import type { ApiContext } from '../context.js';
import { ApiError } from '../errors.js';
import { errorResponses, idParam, problemSchema } from '../http/schemas.js';

const meSchema = z.object({
  kind: z.enum(['user', 'token', 'anonymous']),
  username: z.string(),
  role: z.enum(ROLES),
});

const tokenSchema = z.object({
  id: z.number().int(),
  name: z.string(),
  username: z.string(),
  prefix: z.string(),
  role: z.enum(ROLES).nullable().describe("Role limit of the token; null = the user's role"),
  createdAt: z.string(),
  expiresAt: z.string().nullable(),
  lastUsedAt: z.string().nullable(),
  revokedAt: z.string().nullable(),
});

const userSchema = z.object({
  id: z.number().int(),
  username: z.string(),
  displayName: z.string().nullable(),
  role: z.enum(ROLES),
  disabled: z.boolean(),
  createdAt: z.string(),
});

const newPasswordField = z
  .string()
  .max(1000)
  .describe(
    `At least ${MIN_PASSWORD_LENGTH} characters; a shorter one is refused with API_PASSWORD_TOO_SHORT`,
  );

const passwordChangedSchema = z.object({
  sessionsEnded: z.number().int().describe('Browser sessions of the user that were ended (signed out)'),
});

type AuthApp = Parameters<FastifyPluginAsyncZod>[0];

/** Sign in with username and password: a session cookie, limited per address and per account. */
function loginRoute(app: AuthApp, ctx: ApiContext): void {
  const limiter = createSignInLimiter(ctx.now);
  app.post(
    '/auth/login',
    {
      config: { role: 'public', rateLimit: PASSWORD_CHECK_RATE_LIMIT },
      schema: {
        tags: ['auth'],
        summary: 'Sign in; sets an httpOnly SameSite=Strict session cookie',
        body: z.object({ username: z.string().min(1).max(100), password: z.string().min(1).max(1000) }),
        response: { 200: meSchema, 401: problemSchema, 400: problemSchema, 429: problemSchema },
      },
    },
    async (request, reply) => {
      const { username, password } = request.body;
      const waitMs = limiter.retryAfterMs(username);
      if (waitMs > 0) {
        const retryAfterS = Math.ceil(waitMs / 1000);
        reply.header('retry-after', String(retryAfterS));
        throw new ApiError('API_SIGN_IN_LIMITED', {
          max: SIGN_IN_ACCOUNT_LIMIT.maxFailures,
          windowMinutes: SIGN_IN_ACCOUNT_LIMIT.windowMs / 60_000,
          retryAfterS,
        });
      }
      const user = await checkLogin(ctx.pool, username, password).catch((error: unknown) => {
        limiter.recordFailure(username);
        throw error;
      });
      limiter.recordSuccess(username);
      const secret = await createSession(ctx.pool, user.id);
      await appendAudit(ctx.pool, {
        actor: user.username,
        action: 'session.login',
        entity: 'user',
        entityId: user.id,
      });
      reply.setCookie(SESSION_COOKIE, secret, sessionCookieOptions(ctx.cookieSecure, request));
      return { kind: 'user' as const, username: user.username, role: user.role };
    },
  );
}

/** Sign out: ends the session and clears the cookie. */
function logoutRoute(app: AuthApp, ctx: ApiContext): void {
  app.post(
    '/auth/logout',
    {
      config: { role: 'public' },
      schema: { tags: ['auth'], summary: 'Sign out (ends the session)', response: { 204: z.null() } },
    },
    async (request, reply) => {
      const secret = request.cookies[SESSION_COOKIE];
      if (secret !== undefined && secret !== '') {
        await endSession(ctx.pool, secret);
        if (request.principal?.kind === 'user')
          await appendAudit(ctx.pool, {
            actor: request.principal,
            action: 'session.logout',
            entity: 'user',
            entityId: request.principal.userId,
          });
      }
      reply.clearCookie(SESSION_COOKIE, sessionCookieOptions(ctx.cookieSecure, request));
      return reply.code(204).send(null);
    },
  );
}

/** Who is calling. */
function meRoute(app: AuthApp): void {
  app.get(
    '/auth/me',
    {
      config: { role: 'public' },
      schema: {
        tags: ['auth'],
        summary: 'Who is calling (401 when nobody)',
        response: { 200: meSchema, 401: problemSchema },
      },
    },
    async (request) => {
      const p = request.principal;
      if (p === undefined) throw new ApiError('API_UNAUTHENTICATED');
      return { kind: p.kind, username: p.username, role: p.role };
    },
  );
}

/** A signed-in user changes their own password. */
function ownPasswordRoute(app: AuthApp, ctx: ApiContext): void {
  app.post(
    '/auth/password',
    {
      // Any signed-in user (session or token of a user), for their own password.
      config: { role: 'viewer', rateLimit: PASSWORD_CHECK_RATE_LIMIT },
      schema: {
        tags: ['auth'],
        summary:
          "Change the caller's own password; ends the user's other sessions (the caller's session stays signed in)",
        body: z.object({
          currentPassword: z.string().min(1).max(1000),
          newPassword: newPasswordField,
        }),
        response: {
          200: passwordChangedSchema,
          ...errorResponses,
          429: problemSchema,
        },
      },
    },
    async (request) => {
      const p = request.principal;
      if (p === undefined || p.kind === 'anonymous' || p.userId === undefined)
        throw new ApiError('API_UNAUTHENTICATED');
      const { currentPassword, newPassword } = request.body;
      checkNewPassword(newPassword, currentPassword);
      const expectedHash = await checkCurrentPassword(ctx.pool, p.userId, currentPassword);
      return storeNewPassword(ctx.pool, {
        userId: p.userId,
        newPassword,
        expectedHash,
        keepSessionId: p.kind === 'user' ? p.credentialId : undefined,
        actor: p,
        action: 'user.password.change',
      });
    },
  );
}

/** API tokens, never their secrets (administrators). */
function listTokensRoute(app: AuthApp, ctx: ApiContext): void {
  app.get(
    '/tokens',
    {
      config: { role: 'admin' },
      schema: {
        tags: ['auth'],
        summary: 'API tokens (never their secrets)',
        response: { 200: z.object({ items: z.array(tokenSchema) }), ...errorResponses },
      },
    },
    async () => {
      const { rows } = await ctx.pool.query<{
        id: number;
        name: string;
        username: string;
        prefix: string;
        scopes: string[];
        created_at: Date;
        expires_at: Date | null;
        last_used_at: Date | null;
        revoked_at: Date | null;
      }>(
        `SELECT t.id, t.name, u.username, t.prefix, t.scopes, t.created_at, t.expires_at, t.last_used_at, t.revoked_at
           FROM api_tokens t JOIN users u ON u.id = t.user_id WHERE NOT ('session' = ANY (t.scopes)) ORDER BY t.id`,
      );
      return {
        items: rows.map((t) => {
          const r = t.scopes.find((s) => s.startsWith('role:'))?.slice(5);
          return {
            id: t.id,
            name: t.name,
            username: t.username,
            prefix: t.prefix,
            role: (ROLES as readonly string[]).includes(r ?? '') ? (r as (typeof ROLES)[number]) : null,
            createdAt: t.created_at.toISOString(),
            expiresAt: t.expires_at?.toISOString() ?? null,
            lastUsedAt: t.last_used_at?.toISOString() ?? null,
            revokedAt: t.revoked_at?.toISOString() ?? null,
          };
        }),
      };
    },
  );
}

/** The active user a new token acts for; refused when the token's role would exceed the user's. */
async function tokenUser(
  ctx: ApiContext,
  username: string,
  role: Role | undefined,
): Promise<{ id: number; role: Role }> {
  const { rows } = await ctx.pool.query<{ id: number; role: Role }>(
    `SELECT id, role FROM users WHERE username = $1 AND disabled_at IS NULL`,
    [username],
  );
  const user = rows[0];
  if (user === undefined) throw new ApiError('API_NOT_FOUND', { entity: 'user', id: username });
  if (role !== undefined && !hasRole(user.role, role))
    throw new ApiError('API_CONFLICT', {
      entity: 'token for',
      id: username,
      reason: `a token cannot exceed its user's role ${user.role}`,
    });
  return user;
}

/** Create an API token (administrators). */
function createTokenRoute(app: AuthApp, ctx: ApiContext): void {
  app.post(
    '/tokens',
    {
      config: { role: 'admin' },
      schema: {
        tags: ['auth'],
        summary: 'Create an API token; the secret is in this answer only (stored as a SHA-256 hash)',
        body: z.object({
          name: z.string().min(1).max(100),
          username: z
            .string()
            .min(1)
            .max(100)
            .optional()
            .describe('User the token acts for; default: the caller'),
          role: z.enum(ROLES).optional().describe("Lower the token's role below its user's"),
          expiresInDays: z.number().positive().max(3650).optional(),
        }),
        response: { 201: tokenSchema.extend({ token: z.string() }), ...errorResponses },
      },
    },
    async (request, reply) => {
      const b = request.body;
      const actor = request.principal!;
      const username = b.username ?? actor.username;
      const user = await tokenUser(ctx, username, b.role);
      const secret = newSecret(TOKEN_PREFIX);
      const expires =
        b.expiresInDays === undefined ? null : new Date(ctx.now() + b.expiresInDays * 86_400_000);
      const row = await inTransaction(ctx.pool, async (client) => {
        const { rows } = await client.query<{ id: number; created_at: Date }>(
          `INSERT INTO api_tokens (user_id, name, token_hash, prefix, scopes, expires_at)
           VALUES ($1, $2, $3, $4, $5, $6) RETURNING id, created_at`,
          [
            user.id,
            b.name,
            sha256Hex(secret),
            secret.slice(0, 10),
            b.role === undefined ? [] : [`role:${b.role}`],
            expires,
          ],
        );
        const created = rows[0]!;
        await appendAudit(client, {
          actor,
          action: 'token.create',
          entity: 'api_token',
          entityId: created.id,
          after: { name: b.name, username, role: b.role ?? null, expiresAt: expires?.toISOString() ?? null },
        });
        return created;
      });
      return reply.code(201).send({
        id: row.id,
        name: b.name,
        username,
        prefix: secret.slice(0, 10),
        role: b.role ?? null,
        createdAt: row.created_at.toISOString(),
        expiresAt: expires?.toISOString() ?? null,
        lastUsedAt: null,
        revokedAt: null,
        token: secret,
      });
    },
  );
}

/** Revoke an API token (administrators). */
function revokeTokenRoute(app: AuthApp, ctx: ApiContext): void {
  app.delete(
    '/tokens/:id',
    {
      config: { role: 'admin' },
      schema: {
        tags: ['auth'],
        summary: 'Revoke an API token',
        params: idParam,
        response: { 204: z.null(), ...errorResponses },
      },
    },
    async (request, reply) => {
      const actor = request.principal!;
      await inTransaction(ctx.pool, async (client) => {
        const { rowCount } = await client.query(
          `UPDATE api_tokens SET revoked_at = now() WHERE id = $1 AND revoked_at IS NULL AND NOT ('session' = ANY (scopes))`,
          [request.params.id],
        );
        if (rowCount === 0)
          throw new ApiError('API_NOT_FOUND', { entity: 'active token', id: request.params.id });
        await appendAudit(client, {
          actor,
          action: 'token.revoke',
          entity: 'api_token',
          entityId: request.params.id,
        });
      });
      return reply.code(204).send(null);
    },
  );
}

/** Users (administrators). */
function listUsersRoute(app: AuthApp, ctx: ApiContext): void {
  app.get(
    '/users',
    {
      config: { role: 'admin' },
      schema: {
        tags: ['auth'],
        summary: 'Users',
        response: { 200: z.object({ items: z.array(userSchema) }), ...errorResponses },
      },
    },
    async () => {
      const { rows } = await ctx.pool.query<{
        id: number;
        username: string;
        display_name: string | null;
        role: (typeof ROLES)[number];
        disabled_at: Date | null;
        created_at: Date;
      }>(`SELECT id, username, display_name, role, disabled_at, created_at FROM users ORDER BY username`);
      return {
        items: rows.map((u) => ({
          id: u.id,
          username: u.username,
          displayName: u.display_name,
          role: u.role,
          disabled: u.disabled_at !== null,
          createdAt: u.created_at.toISOString(),
        })),
      };
    },
  );
}

/** Create a user (administrators). */
function createUserRoute(app: AuthApp, ctx: ApiContext): void {
  app.post(
    '/users',
    {
      config: { role: 'admin' },
      schema: {
        tags: ['auth'],
        summary: 'Create a user (password hashed with scrypt)',
        body: z.object({
          username: z.string().regex(/^[a-z0-9._-]{2,64}$/),
          displayName: z.string().max(200).optional(),
          password: z.string().min(MIN_PASSWORD_LENGTH).max(1000),
          role: z.enum(ROLES),
        }),
        response: { 201: userSchema, ...errorResponses, 409: problemSchema },
      },
    },
    async (request, reply) => {
      const b = request.body;
      const actor = request.principal!;
      const hash = await hashPassword(b.password);
      const user = await inTransaction(ctx.pool, async (client) => {
        const { rows } = await client.query<{ id: number; created_at: Date }>(
          `INSERT INTO users (username, display_name, password_hash, role) VALUES ($1, $2, $3, $4)
           ON CONFLICT (username) DO NOTHING RETURNING id, created_at`,
          [b.username, b.displayName ?? null, hash, b.role],
        );
        const created = rows[0];
        if (created === undefined)
          throw new ApiError('API_CONFLICT', { entity: 'user', id: b.username, reason: 'exists already' });
        await appendAudit(client, {
          actor,
          action: 'user.create',
          entity: 'user',
          entityId: created.id,
          after: { username: b.username, role: b.role, displayName: b.displayName ?? null },
        });
        return created;
      });
      return reply.code(201).send({
        id: user.id,
        username: b.username,
        displayName: b.displayName ?? null,
        role: b.role,
        disabled: false,
        createdAt: user.created_at.toISOString(),
      });
    },
  );
}

/** An administrator sets another user's password. */
function resetPasswordRoute(app: AuthApp, ctx: ApiContext): void {
  app.put(
    '/users/:id/password',
    {
      config: { role: 'admin' },
      schema: {
        tags: ['auth'],
        summary: "Set another user's password (an administrator's reset); ends all of that user's sessions",
        params: idParam,
        body: z.object({ newPassword: newPasswordField }),
        response: { 200: passwordChangedSchema, ...errorResponses },
      },
    },
    async (request) => {
      checkNewPassword(request.body.newPassword);
      return storeNewPassword(ctx.pool, {
        userId: request.params.id,
        newPassword: request.body.newPassword,
        actor: request.principal!,
        action: 'user.password.reset',
      });
    },
  );
}

/** Sign-in, sessions, own password, API tokens and users. */
export const authRoutes: FastifyPluginAsyncZod<{ ctx: ApiContext }> = async (app, { ctx }) => {
  for (const route of [
    loginRoute,
    logoutRoute,
    meRoute,
    ownPasswordRoute,
    listTokensRoute,
    createTokenRoute,
    revokeTokenRoute,
    listUsersRoute,
    createUserRoute,
    resetPasswordRoute,
  ])
    route(app, ctx);
};
