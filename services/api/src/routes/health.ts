import { migrationLevel } from '@isentrope/store';
import type { FastifyPluginAsyncZod } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { hasRole } from '../auth/roles.js';
import type { ApiDependencies } from '../context.js';

const healthResponse = z.object({
  status: z.enum(['ok', 'degraded']),
  version: z.string(),
  uptimeSeconds: z.number(),
  database: z.object({
    kind: z.enum(['external', 'embedded']),
    url: z.string().optional().describe('Shown to administrators only'),
    reachable: z.boolean(),
    migrationLevel: z.string().nullable(),
    migrationsApplied: z.number().int(),
    error: z.string().optional().describe('Why the database is not reachable; administrators only'),
  }),
});

/**
 * Liveness with the facts an integrator asks first: which kind of database, at which migration
 * level. Its address and the connection error (which names hosts) go to administrators only.
 */
export const healthRoutes: FastifyPluginAsyncZod<{ deps: ApiDependencies }> = async (app, { deps }) => {
  app.get(
    '/health',
    {
      config: { role: 'public' },
      schema: { tags: ['health'], summary: 'Service and database health', response: { 200: healthResponse } },
    },
    async (request) => {
      const admin = request.principal !== undefined && hasRole(request.principal.role, 'admin');
      const url = admin ? { url: deps.database.displayUrl } : {};
      const base = {
        version: deps.version,
        uptimeSeconds: Math.round((Date.now() - deps.startedAt) / 1000),
      };
      try {
        const level = await migrationLevel(deps.pool);
        return {
          ...base,
          status: 'ok' as const,
          database: {
            kind: deps.database.kind,
            ...url,
            reachable: true,
            migrationLevel: level.level ?? null,
            migrationsApplied: level.count,
          },
        };
      } catch (error) {
        return {
          ...base,
          status: 'degraded' as const,
          database: {
            kind: deps.database.kind,
            ...url,
            reachable: false,
            migrationLevel: null,
            migrationsApplied: 0,
            ...(admin ? { error: error instanceof Error ? error.message : String(error) } : {}),
          },
        };
      }
    },
  );

  app.get(
    '/ready',
    {
      config: { role: 'public' },
      schema: {
        tags: ['health'],
        summary: 'Ready to serve: database reachable',
        response: {
          200: z.object({ ready: z.literal(true) }),
          503: z.object({ ready: z.literal(false), reason: z.string() }),
        },
      },
    },
    async (request, reply) => {
      try {
        await deps.pool.query('SELECT 1');
        return { ready: true as const };
      } catch (error) {
        // The driver's message names hosts and users: it goes to the log, not to anonymous callers.
        request.log.warn({ err: error }, 'not ready: the database did not answer');
        return reply.code(503).send({ ready: false as const, reason: 'the database did not answer' });
      }
    },
  );
};
