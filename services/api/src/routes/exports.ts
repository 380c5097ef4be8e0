/**
 * Exports: list, make now, download. A monthly export covers a calendar month in the sites' time
 * zone (local midnight on the 1st to local midnight on the next 1st), or in the zone asked for;
 * the stored period is that span in UTC. Exports made before months followed the site zone cover
 * UTC months; they are listed and served as they were made (see services/jobs/src/monthly/job.ts).
 */
import { createHash } from 'node:crypto';
import {
  assertTimeZone,
  buildMonthlyReport,
  gatherMonth,
  localMonth,
  renderReport,
  sharedMonthZone,
} from '@isentrope/monitor';
import { monthlyFigures } from '@isentrope/store';
import type { FastifyPluginAsyncZod } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { appendAudit } from '../audit.js';
import type { ApiContext } from '../context.js';
import { ApiError } from '../errors.js';
import {
  decodeCursor,
  encodeCursor,
  errorResponses,
  idParam,
  nextLink,
  page,
  pageQuery,
  problemSchema,
} from '../http/schemas.js';

export const EXPORT_KIND = 'monthly-degradation';

const FORMATS = ['csv', 'json', 'html'] as const;
type Format = (typeof FORMATS)[number];

const CONTENT_TYPES: Readonly<Record<Format, string>> = {
  csv: 'text/csv; charset=utf-8; header=present',
  json: 'application/json; charset=utf-8',
  html: 'text/html; charset=utf-8',
};

const exportSchema = z.object({
  id: z.number().int(),
  kind: z.string(),
  machineId: z.number().int().nullable(),
  month: z.string().describe("The calendar month 'YYYY-MM' the period covers (in the zone it was cut in)"),
  periodFrom: z.string().describe('Start of the period, UTC'),
  periodTo: z.string().describe('End of the period (excluded), UTC'),
  format: z.enum(['csv', 'json', 'html', 'pdf']),
  status: z.enum(['pending', 'done', 'failed']),
  sizeBytes: z.number().int().nullable(),
  checksum: z.string().nullable().describe('SHA-256 of the content, hex'),
  error: z.string().nullable(),
  createdBy: z.string(),
  createdAt: z.string(),
  download: z.string().nullable(),
});

interface ExportRow {
  id: number;
  kind: string;
  machine_id: number | null;
  period_from: Date;
  period_to: Date;
  format: 'csv' | 'json' | 'html' | 'pdf';
  status: 'pending' | 'done' | 'failed';
  size: number | null;
  checksum: string | null;
  error: string | null;
  created_by: string;
  created_at: Date;
}

const COLS = `id::int, kind, machine_id, period_from, period_to, format, status, octet_length(content) AS size, checksum, error, created_by, created_at`;

/**
 * The month of a stored period: its mid-point's UTC month. A local month's mid-point lies at least
 * 13 days from either end, so it falls in the same month in every zone (offsets are within ±14 h).
 */
function periodMonth(from: Date, to: Date): string {
  return new Date((from.getTime() + to.getTime()) / 2).toISOString().slice(0, 7);
}

function exportOut(r: ExportRow): z.infer<typeof exportSchema> {
  return {
    id: r.id,
    kind: r.kind,
    machineId: r.machine_id,
    month: periodMonth(r.period_from, r.period_to),
    periodFrom: r.period_from.toISOString(),
    periodTo: r.period_to.toISOString(),
    format: r.format,
    status: r.status,
    sizeBytes: r.size,
    checksum: r.checksum,
    error: r.error,
    createdBy: r.created_by,
    createdAt: r.created_at.toISOString(),
    download: r.status === 'done' ? `/api/exports/${r.id}/download` : null,
  };
}

function isTimeZone(zone: string): boolean {
  try {
    assertTimeZone(zone);
    return true;
  } catch {
    return false;
  }
}

/** The zone an export is cut in when none is asked for: the machines' site zone, when their months agree. */
export async function exportTimeZone(
  pool: ApiContext['pool'],
  month: string,
  machineId: number | undefined,
): Promise<string> {
  const { rows } = await pool.query<{ time_zone: string }>(
    `SELECT DISTINCT s.time_zone FROM sites s JOIN machines m ON m.site_id = s.id
      WHERE $1::int IS NULL OR m.id = $1`,
    [machineId ?? null],
  );
  const zones = rows.map((r) => r.time_zone);
  const zone = sharedMonthZone(month, zones);
  if (zone === undefined)
    throw new ApiError('API_UNPROCESSABLE', {
      reason: `the machines are at sites in time zones whose month ${month} differs (${zones.sort().join(', ')}); ask for one with timeZone, or for one machine`,
    });
  return zone;
}

/**
 * Render the month's report in one format: the same gatherer (packages/monitor gatherMonth over
 * the stored figures), builder and renderer as the scheduled monthly job, so an export made here
 * and one made by the schedule for the same month and clock are the same bytes.
 */
export async function renderMonthlyExport(
  ctx: Pick<ApiContext, 'pool' | 'energyPrice' | 'now'>,
  month: string,
  timeZone: string,
  format: Format,
  machineId: number | undefined,
): Promise<string> {
  const input = await gatherMonth(monthlyFigures(ctx.pool), month, {
    timeZone,
    machineIds: machineId === undefined ? undefined : [machineId],
    price: ctx.energyPrice,
    generatedAtMs: ctx.now(),
  });
  return renderReport(buildMonthlyReport(input), format);
}

type App = Parameters<FastifyPluginAsyncZod<{ ctx: ApiContext }>>[0];

function listExportsRoute(app: App, ctx: ApiContext): void {
  app.get(
    '/exports',
    {
      schema: {
        tags: ['exports'],
        summary: 'Exports, newest first, paginated',
        querystring: pageQuery,
        response: { 200: page(exportSchema), ...errorResponses },
      },
    },
    async (request) => {
      const q = request.query;
      const cursor = decodeCursor(q.cursor);
      const before = cursor === undefined ? undefined : Number(cursor[0]);
      if (before !== undefined && !Number.isInteger(before))
        throw new ApiError('API_BAD_CURSOR', { cursor: q.cursor });
      const { rows } = await ctx.pool.query<ExportRow>(
        `SELECT ${COLS} FROM exports WHERE ($1::bigint IS NULL OR id < $1) ORDER BY id DESC LIMIT $2`,
        [before ?? null, q.limit + 1],
      );
      const items = rows.slice(0, q.limit);
      const last = items.at(-1);
      return {
        items: items.map(exportOut),
        next: nextLink(
          request.url,
          rows.length > q.limit && last !== undefined ? encodeCursor([last.id]) : undefined,
        ),
      };
    },
  );
}

function makeExportRoute(app: App, ctx: ApiContext): void {
  app.post(
    '/exports',
    {
      // Making an export computes a month and stores it: an engineer's action (README, "Security").
      config: { role: 'engineer' },
      schema: {
        tags: ['exports'],
        summary: 'Make the monthly degradation export now (CSV, JSON or printable HTML) and store it',
        body: z.object({
          month: z
            .string()
            .regex(/^\d{4}-(0[1-9]|1[0-2])$/)
            .describe("Calendar month 'YYYY-MM', local to timeZone"),
          timeZone: z
            .string()
            .refine(isTimeZone, {
              message: 'not an IANA time zone; use a name such as "Europe/Berlin" or "UTC"',
            })
            .optional()
            .describe("IANA zone of the month and its days; default the machines' site zone"),
          format: z.enum(FORMATS).default('csv'),
          machineId: z.number().int().positive().optional(),
        }),
        response: { 201: exportSchema, ...errorResponses, 422: problemSchema },
      },
    },
    async (request, reply) => {
      const { month, format, machineId } = request.body;
      const actor = request.principal!;
      const timeZone = request.body.timeZone ?? (await exportTimeZone(ctx.pool, month, machineId));
      const { fromMs, toMs } = localMonth(month, timeZone);
      let content: string;
      let status: 'done' | 'failed' = 'done';
      let error: string | null = null;
      try {
        content = await renderMonthlyExport(ctx, month, timeZone, format, machineId);
      } catch (e) {
        // A failed export is recorded with its reason, so the list shows what went wrong.
        status = 'failed';
        error = e instanceof Error ? `${(e as { code?: string }).code ?? e.name}: ${e.message}` : String(e);
        content = '';
      }
      const bytes = Buffer.from(content, 'utf8');
      const { rows } = await ctx.pool.query<ExportRow>(
        `INSERT INTO exports (kind, machine_id, period_from, period_to, format, status, content, checksum, error, created_by, finished_at)
       VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, now()) RETURNING ${COLS}`,
        [
          EXPORT_KIND,
          machineId ?? null,
          new Date(fromMs),
          new Date(toMs),
          format,
          status,
          status === 'done' ? bytes : null,
          status === 'done' ? createHash('sha256').update(bytes).digest('hex') : null,
          error,
          actor.username,
        ],
      );
      const row = rows[0]!;
      await appendAudit(ctx.pool, {
        actor,
        action: 'export.create',
        entity: 'export',
        entityId: row.id,
        after: exportOut(row),
      });
      if (status === 'failed')
        throw new ApiError('API_UNPROCESSABLE', { reason: `export ${row.id} failed: ${error}` });
      return reply.code(201).send(exportOut(row));
    },
  );
}

function downloadExportRoute(app: App, ctx: ApiContext): void {
  app.get(
    '/exports/:id/download',
    {
      schema: {
        tags: ['exports'],
        summary: 'Download an export (CSV, JSON or HTML) as an attachment',
        params: idParam,
        response: { 200: z.string(), ...errorResponses, 409: problemSchema },
      },
    },
    async (request, reply) => {
      const { rows } = await ctx.pool.query<ExportRow & { content: Buffer | null }>(
        `SELECT ${COLS}, content FROM exports WHERE id = $1`,
        [request.params.id],
      );
      const r = rows[0];
      if (r === undefined) throw new ApiError('API_NOT_FOUND', { entity: 'export', id: request.params.id });
      if (r.status !== 'done' || r.content === null || r.format === 'pdf')
        throw new ApiError('API_EXPORT_NOT_READY', { id: r.id, status: r.status });
      const month = periodMonth(r.period_from, r.period_to);
      const name = `isentrope-degradation-${month}${r.machine_id === null ? '' : `-machine-${r.machine_id}`}.${r.format}`;
      return reply
        .type(CONTENT_TYPES[r.format])
        .header('content-disposition', `attachment; filename="${name}"`)
        .send(r.content.toString('utf8'));
    },
  );
}

export const exportRoutes: FastifyPluginAsyncZod<{ ctx: ApiContext }> = async (app, { ctx }) => {
  listExportsRoute(app, ctx);
  makeExportRoute(app, ctx);
  downloadExportRoute(app, ctx);
};
