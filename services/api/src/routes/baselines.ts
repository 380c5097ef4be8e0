import { fitBaseline, MonitorError, type PolynomialBaseline } from '@isentrope/monitor';
import { type BaselineRow, BASELINE_COLUMNS as COLS } from '@isentrope/store';
import type { FastifyPluginAsyncZod } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { appendAudit, inTransaction } from '../audit.js';
import type { ApiContext } from '../context.js';
import { ApiError } from '../errors.js';
import { errorResponses, idParam, isoTime, problemSchema } from '../http/schemas.js';
import { type BandRow, getBands, machineOr404 } from '../queries/machines.js';

const baselineSchema = z.object({
  id: z.number().int(),
  operatingPoint: z.enum(['load', 'massFlow', 'pressureRatio']),
  referenceFrom: z.string(),
  referenceTo: z.string(),
  coefficients: z
    .array(z.number())
    .describe('Efficiency polynomial in the raw operating point, lowest power first'),
  xMin: z.number().nullable(),
  xMax: z.number().nullable(),
  n: z.number().int(),
  residualStd: z.number().nullable(),
  rSquared: z.number().nullable(),
  active: z.boolean(),
  createdAt: z.string(),
  createdBy: z.string(),
});

function baselineOut(r: BaselineRow): z.infer<typeof baselineSchema> {
  return {
    id: r.id,
    operatingPoint: r.operating_point,
    referenceFrom: r.reference_from.toISOString(),
    referenceTo: r.reference_to.toISOString(),
    coefficients: r.coefficients,
    xMin: r.x_min,
    xMax: r.x_max,
    n: r.n,
    residualStd: r.residual_std,
    rSquared: r.r_squared,
    active: r.active,
    createdAt: r.created_at.toISOString(),
    createdBy: r.created_by,
  };
}

const bandsSchema = z.object({
  warning: z.number().positive().describe('Warning level: loss of efficiency [%-points], > 0'),
  alarm: z.number().positive().describe('Alarm level [%-points], > warning'),
  onDelayS: z.number().min(0),
  offDelayS: z.number().min(0),
  deadband: z.number().min(0).describe('[%-points]'),
  minCoverage: z.number().min(0).max(1),
  severity: z.enum(['low', 'medium', 'high', 'urgent']),
  requireBeyondUncertainty: z.boolean(),
});

function bandsOut(b: BandRow): z.infer<typeof bandsSchema> {
  return {
    warning: b.warning,
    alarm: b.alarm,
    onDelayS: b.on_delay_s,
    offDelayS: b.off_delay_s,
    deadband: b.deadband,
    minCoverage: b.min_coverage,
    severity: b.severity,
    requireBeyondUncertainty: b.require_beyond_uncertainty,
  };
}

type App = Parameters<FastifyPluginAsyncZod<{ ctx: ApiContext }>>[0];

function listBaselinesRoute(app: App, ctx: ApiContext): void {
  app.get(
    '/machines/:id/baselines',
    {
      schema: {
        tags: ['baselines'],
        summary: 'Baselines of a machine, newest first (one is active)',
        params: idParam,
        response: { 200: z.object({ items: z.array(baselineSchema) }), ...errorResponses },
      },
    },
    async (request) => {
      await machineOr404(ctx.pool, request.params.id);
      const { rows } = await ctx.pool.query<BaselineRow>(
        `SELECT ${COLS} FROM baselines WHERE machine_id = $1 ORDER BY created_at DESC, id DESC`,
        [request.params.id],
      );
      return { items: rows.map(baselineOut) };
    },
  );
}

/** Fit a polynomial baseline on the period's valid (and, when asked, steady) results; a fit that cannot be made is API_FIT_FAILED. */
async function fitOnPeriod(
  ctx: ApiContext,
  machineId: number,
  fromMs: number,
  toMs: number,
  body: { degree: 1 | 2 | 3; steadyOnly: boolean },
): Promise<PolynomialBaseline> {
  const { rows: pts } = await ctx.pool.query<{ x: number; y: number }>(
    `SELECT operating_point AS x, efficiency AS y FROM results
    WHERE machine_id = $1 AND time >= $2 AND time < $3 AND valid AND ($4::boolean IS FALSE OR steady)
      AND efficiency IS NOT NULL AND operating_point IS NOT NULL`,
    [machineId, new Date(fromMs), new Date(toMs), body.steadyOnly],
  );
  let model: ReturnType<typeof fitBaseline>;
  try {
    model = fitBaseline(
      pts.map((p) => p.x),
      pts.map((p) => p.y),
      { method: 'polynomial', degree: body.degree },
    );
  } catch (error) {
    if (error instanceof MonitorError)
      throw new ApiError('API_FIT_FAILED', { reason: `${error.code}: ${error.message}` });
    throw error;
  }
  if (model.kind !== 'polynomial') throw new ApiError('API_FIT_FAILED', { reason: 'not a polynomial' });
  return model;
}

function fitBaselineRoute(app: App, ctx: ApiContext): void {
  app.post(
    '/machines/:id/baselines',
    {
      config: { role: 'engineer' },
      schema: {
        tags: ['baselines'],
        summary:
          'Fit a new baseline on a reference period (valid, steady results) and make it the active one',
        params: idParam,
        body: z.object({
          from: isoTime,
          to: isoTime,
          operatingPoint: z.enum(['load', 'massFlow', 'pressureRatio']).default('load'),
          degree: z.union([z.literal(1), z.literal(2), z.literal(3)]).default(2),
          steadyOnly: z.boolean().default(true),
        }),
        response: { 201: baselineSchema, ...errorResponses, 422: problemSchema },
      },
    },
    async (request, reply) => {
      const m = await machineOr404(ctx.pool, request.params.id);
      const body = request.body;
      const fromMs = Date.parse(body.from);
      const toMs = Date.parse(body.to);
      if (!(fromMs < toMs)) throw new ApiError('API_BAD_RANGE', { from: body.from, to: body.to });
      const model = await fitOnPeriod(ctx, m.id, fromMs, toMs, body);
      const actor = request.principal!;
      const row = await inTransaction(ctx.pool, async (client) => {
        const before = await client.query<BaselineRow>(
          `SELECT ${COLS} FROM baselines WHERE machine_id = $1 AND active`,
          [m.id],
        );
        await client.query(`UPDATE baselines SET active = false WHERE machine_id = $1 AND active`, [m.id]);
        const { rows } = await client.query<BaselineRow>(
          `INSERT INTO baselines (machine_id, operating_point, reference_from, reference_to, coefficients, x_min, x_max,
                                n, residual_std, r_squared, statistics, active, created_by)
         VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, true, $12) RETURNING ${COLS}`,
          [
            m.id,
            body.operatingPoint,
            new Date(fromMs),
            new Date(toMs),
            model.coefficients,
            model.xMin,
            model.xMax,
            model.n,
            model.residualStd,
            Number.isFinite(model.r2) ? model.r2 : null,
            JSON.stringify({
              model,
              method: 'polynomial least squares (packages/monitor fitBaseline)',
              steadyOnly: body.steadyOnly,
            }),
            actor.username,
          ],
        );
        const created = rows[0]!;
        await appendAudit(client, {
          actor,
          action: 'baseline.fit',
          entity: 'machine',
          entityId: m.id,
          before: before.rows[0] === undefined ? null : baselineOut(before.rows[0]),
          after: baselineOut(created),
        });
        return created;
      });
      return reply.code(201).send(baselineOut(row));
    },
  );
}

function getBandsRoute(app: App, ctx: ApiContext): void {
  app.get(
    '/machines/:id/bands',
    {
      schema: {
        tags: ['baselines'],
        summary: 'Alert bands of a machine',
        params: idParam,
        response: { 200: bandsSchema.nullable(), ...errorResponses },
      },
    },
    async (request) => {
      await machineOr404(ctx.pool, request.params.id);
      const b = await getBands(ctx.pool, request.params.id);
      return b === undefined ? null : bandsOut(b);
    },
  );
}

function setBandsRoute(app: App, ctx: ApiContext): void {
  app.put(
    '/machines/:id/bands',
    {
      config: { role: 'engineer' },
      schema: {
        tags: ['baselines'],
        summary: 'Set the alert bands of a machine',
        params: idParam,
        body: bandsSchema.refine((b) => b.alarm > b.warning, {
          error: 'alarm must be greater than warning',
          path: ['alarm'],
        }),
        response: { 200: bandsSchema, ...errorResponses },
      },
    },
    async (request) => {
      const m = await machineOr404(ctx.pool, request.params.id);
      const b = request.body;
      const actor = request.principal!;
      return inTransaction(ctx.pool, async (client) => {
        const before = await getBands(client, m.id);
        await client.query(
          `INSERT INTO bands (machine_id, warning, alarm, on_delay_s, off_delay_s, deadband, min_coverage, severity, require_beyond_uncertainty)
         VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9)
         ON CONFLICT (machine_id) DO UPDATE SET warning = $2, alarm = $3, on_delay_s = $4, off_delay_s = $5,
           deadband = $6, min_coverage = $7, severity = $8, require_beyond_uncertainty = $9, updated_at = now()`,
          [
            m.id,
            b.warning,
            b.alarm,
            b.onDelayS,
            b.offDelayS,
            b.deadband,
            b.minCoverage,
            b.severity,
            b.requireBeyondUncertainty,
          ],
        );
        const after = (await getBands(client, m.id))!;
        await appendAudit(client, {
          actor,
          action: 'bands.set',
          entity: 'machine',
          entityId: m.id,
          before: before === undefined ? null : bandsOut(before),
          after: bandsOut(after),
        });
        return bandsOut(after);
      });
    },
  );
}

export const baselineRoutes: FastifyPluginAsyncZod<{ ctx: ApiContext }> = async (app, { ctx }) => {
  listBaselinesRoute(app, ctx);
  fitBaselineRoute(app, ctx);
  getBandsRoute(app, ctx);
  setBandsRoute(app, ctx);
};
