import type { FastifyPluginAsyncZod } from 'fastify-type-provider-zod';
import { z } from 'zod';
import type { ApiContext } from '../context.js';
import { ApiError } from '../errors.js';
import { decodeCursor, encodeCursor, errorResponses, nextLink, page, pageQuery } from '../http/schemas.js';

const itemSchema = z.object({
  id: z.number().int(),
  fileId: z.number().int().nullable(),
  file: z.string().nullable().describe('Path of the ingested file, when the row came from one'),
  source: z.string(),
  line: z.number().int().nullable(),
  column: z.string().nullable(),
  reason: z.string(),
  raw: z.string().nullable(),
  createdAt: z.string(),
});

/** Rows the ingest could not store, with where they came from and why; newest first. */
export const quarantineRoutes: FastifyPluginAsyncZod<{ ctx: ApiContext }> = async (app, { ctx }) => {
  app.get(
    '/quarantine',
    {
      schema: {
        tags: ['ingest'],
        summary: 'Quarantined input rows, newest first, paginated',
        querystring: pageQuery.extend({ source: z.string().max(200).optional() }),
        response: { 200: page(itemSchema), ...errorResponses },
      },
    },
    async (request) => {
      const q = request.query;
      const cursor = decodeCursor(q.cursor);
      const before = cursor === undefined ? undefined : Number(cursor[0]);
      if (before !== undefined && !Number.isInteger(before))
        throw new ApiError('API_BAD_CURSOR', { cursor: q.cursor });
      const { rows } = await ctx.pool.query<{
        id: number;
        file_id: number | null;
        path: string | null;
        source: string;
        line: number | null;
        column_name: string | null;
        reason: string;
        raw: string | null;
        created_at: Date;
      }>(
        `SELECT q.id::int, q.file_id::int, f.path, q.source, q.line, q.column_name, q.reason, q.raw, q.created_at
           FROM quarantine q LEFT JOIN ingested_files f ON f.id = q.file_id
          WHERE ($1::text IS NULL OR q.source = $1) AND ($2::bigint IS NULL OR q.id < $2)
          ORDER BY q.id DESC LIMIT $3`,
        [q.source ?? null, before ?? null, q.limit + 1],
      );
      const items = rows.slice(0, q.limit);
      const last = items.at(-1);
      return {
        items: items.map((r) => ({
          id: r.id,
          fileId: r.file_id,
          file: r.path,
          source: r.source,
          line: r.line,
          column: r.column_name,
          reason: r.reason,
          raw: r.raw,
          createdAt: r.created_at.toISOString(),
        })),
        next: nextLink(
          request.url,
          rows.length > q.limit && last !== undefined ? encodeCursor([last.id]) : undefined,
        ),
      };
    },
  );
};
