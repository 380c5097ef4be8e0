import type { FastifyPluginAsyncZod } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { appendAudit, inTransaction } from '../audit.js';
import type { ApiContext } from '../context.js';
import { ApiError } from '../errors.js';
import { errorResponses, idParam } from '../http/schemas.js';

/**
 * Plant configuration changes an administrator may make through the API. The plant file (applied
 * by `isentrope` with packages/store applyPlant) stays the main path; here: take a machine out of
 * service and back, audited.
 */
export const plantRoutes: FastifyPluginAsyncZod<{ ctx: ApiContext }> = async (app, { ctx }) => {
  app.patch(
    '/machines/:id',
    {
      config: { role: 'admin' },
      schema: {
        tags: ['plant'],
        summary: "Change a machine's name or its out-of-service flag",
        params: idParam,
        body: z
          .object({ name: z.string().min(1).max(200).optional(), outOfService: z.boolean().optional() })
          .refine((b) => b.name !== undefined || b.outOfService !== undefined, {
            error: 'nothing to change',
          }),
        response: {
          200: z.object({ id: z.number().int(), name: z.string(), outOfService: z.boolean() }),
          ...errorResponses,
        },
      },
    },
    async (request) => {
      const actor = request.principal!;
      return inTransaction(ctx.pool, async (client) => {
        const before = await client.query<{ id: number; name: string; out_of_service: boolean }>(
          `SELECT id, name, out_of_service FROM machines WHERE id = $1 FOR UPDATE`,
          [request.params.id],
        );
        const b = before.rows[0];
        if (b === undefined)
          throw new ApiError('API_NOT_FOUND', { entity: 'machine', id: request.params.id });
        const { rows } = await client.query<{ id: number; name: string; out_of_service: boolean }>(
          `UPDATE machines SET name = coalesce($2, name), out_of_service = coalesce($3, out_of_service), updated_at = now()
            WHERE id = $1 RETURNING id, name, out_of_service`,
          [b.id, request.body.name ?? null, request.body.outOfService ?? null],
        );
        const a = rows[0]!;
        await appendAudit(client, {
          actor,
          action: 'machine.update',
          entity: 'machine',
          entityId: b.id,
          before: { name: b.name, outOfService: b.out_of_service },
          after: { name: a.name, outOfService: a.out_of_service },
        });
        return { id: a.id, name: a.name, outOfService: a.out_of_service };
      });
    },
  );
};
