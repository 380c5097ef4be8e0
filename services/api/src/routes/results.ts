import { degradation } from '@isentrope/monitor';
import { readActiveBaselineRow } from '@isentrope/store';
import type { FastifyPluginAsyncZod } from 'fastify-type-provider-zod';
import { z } from 'zod';
import type { ApiContext } from '../context.js';
import { ApiError } from '../errors.js';
import { sendJsonWithEtag } from '../http/etag.js';
import {
  decodeCursor,
  encodeCursor,
  errorResponses,
  idParam,
  nextLink,
  page,
  pageQuery,
  rangeQuery,
  resolveRange,
} from '../http/schemas.js';
import { getBands, machineOr404 } from '../queries/machines.js';
import { withoutJit } from '../queries/nojit.js';
import {
  type DailyDrift,
  dailyDrift,
  listResults,
  type ResultRow,
  resultTrend,
  type TrendBucket,
} from '../queries/results.js';
import { CACHE_MIN_BUCKET_MS, CACHE_MIN_RANGE_MS, TrendCache } from '../queries/trend-cache.js';

const n = z.number().nullable();

export const resultSchema = z.object({
  time: z.string(),
  pIn: n.describe('[Pa]'),
  tIn: n.describe('[K]'),
  hIn: n.describe('[J/kg]'),
  sIn: n.describe('[J/(kg K)]'),
  pOut: n,
  tOut: n,
  hOut: n,
  sOut: n,
  tOutS: n.describe('Isentropic outlet temperature [K]'),
  hOutS: n.describe('Isentropic outlet enthalpy [J/kg]'),
  massFlow: n.describe('[kg/s]'),
  efficiency: n.describe('Isentropic efficiency [-]'),
  uEfficiency: n,
  polytropicEfficiency: n,
  uPolytropicEfficiency: n,
  specificWork: n.describe('[J/kg]'),
  uSpecificWork: n,
  power: n.describe('[W]'),
  uPower: n,
  entropyGeneration: n.describe('s_out - s_in [J/(kg K)]'),
  uEntropyGeneration: n,
  operatingPoint: n,
  steady: z.boolean(),
  flags: z.array(z.string()),
  valid: z.boolean(),
});

export function resultOut(r: ResultRow): z.infer<typeof resultSchema> {
  return {
    time: r.time.toISOString(),
    pIn: r.p_in,
    tIn: r.t_in,
    hIn: r.h_in,
    sIn: r.s_in,
    pOut: r.p_out,
    tOut: r.t_out,
    hOut: r.h_out,
    sOut: r.s_out,
    tOutS: r.t_out_s,
    hOutS: r.h_out_s,
    massFlow: r.mass_flow,
    efficiency: r.efficiency,
    uEfficiency: r.u_efficiency,
    polytropicEfficiency: r.polytropic_efficiency,
    uPolytropicEfficiency: r.u_polytropic_efficiency,
    specificWork: r.specific_work,
    uSpecificWork: r.u_specific_work,
    power: r.power,
    uPower: r.u_power,
    entropyGeneration: r.entropy_generation,
    uEntropyGeneration: r.u_entropy_generation,
    operatingPoint: r.operating_point,
    steady: r.steady,
    flags: r.flags,
    valid: r.valid,
  };
}

const bucketSchema = z.object({
  t: z.number().describe('Bucket start [ms since epoch]'),
  n: z.number().int(),
  nValid: z.number().int(),
  efficiencyMean: n,
  efficiencyMin: n,
  efficiencyMax: n,
  uEfficiency: n,
  baseline: n,
  driftPts: n,
  specificWorkMean: n,
  powerMean: n,
  powerMin: n,
  powerMax: n,
  operatingPointMean: n,
  entropyGenerationMean: n,
});

const trendResponse = z.object({
  machineId: z.number().int(),
  from: z.string(),
  to: z.string(),
  bucketMs: z.number(),
  bands: z.object({ warning: z.number(), alarm: z.number() }).nullable(),
  baselineId: z.number().int().nullable(),
  buckets: z.array(bucketSchema),
});

const HOUR = 3_600_000;

/**
 * Round to `d` decimals (null stays null); dividing the integer by 10^d gives the double nearest
 * the decimal, which JSON then writes in its short form.
 */
function r(v: number | null, d: number): number | null {
  if (v === null) return null;
  const f = 10 ** d;
  return Math.round(v * f) / f;
}

/**
 * Trend figures rounded for the wire: efficiencies to 1e-7 (a result's standard uncertainty is
 * of the order of 1e-3), drift to 1e-5 points, power to 1 W, specific work to 0.01 J/kg. Halves
 * the size of a thousand-bucket answer, which dominated its serving time (api.bench.ts).
 */
function roundBucket(b: TrendBucket): TrendBucket {
  return {
    ...b,
    efficiencyMean: r(b.efficiencyMean, 7),
    efficiencyMin: r(b.efficiencyMin, 7),
    efficiencyMax: r(b.efficiencyMax, 7),
    uEfficiency: r(b.uEfficiency, 7),
    baseline: r(b.baseline, 7),
    driftPts: r(b.driftPts, 5),
    specificWorkMean: r(b.specificWorkMean, 2),
    powerMean: r(b.powerMean, 0),
    powerMin: r(b.powerMin, 0),
    powerMax: r(b.powerMax, 0),
    operatingPointMean: r(b.operatingPointMean, 7),
    entropyGenerationMean: r(b.entropyGenerationMean, 4),
  };
}

async function buildTrend(
  ctx: ApiContext,
  cache: TrendCache,
  id: number,
  range: { from?: string | undefined; to?: string | undefined },
  bucketsOrWindow: { buckets: number } | { windowS: number },
) {
  const m = await machineOr404(ctx.pool, id);
  const { fromMs, toMs } = resolveRange(range, ctx.now());
  const baseline = await readActiveBaselineRow(ctx.pool, m.id);
  const bands = await getBands(ctx.pool, m.id);
  const buckets =
    'buckets' in bucketsOrWindow
      ? bucketsOrWindow.buckets
      : Math.max(1, Math.ceil((toMs - fromMs) / (bucketsOrWindow.windowS * 1000)));
  if (buckets > 20_000)
    throw new ApiError('API_UNPROCESSABLE', {
      reason: `${buckets} windows asked; at most 20000 per request`,
    });
  // Long ranges come from the hourly aggregates (whole-hour buckets); short ones from the live query.
  const hourly = Math.ceil((toMs - fromMs) / buckets / HOUR) * HOUR;
  const trend =
    toMs - fromMs >= CACHE_MIN_RANGE_MS && hourly >= CACHE_MIN_BUCKET_MS
      ? { widthMs: hourly, buckets: await cache.trend(m.id, fromMs, toMs, hourly, baseline) }
      : await resultTrend(ctx.pool, m.id, fromMs, toMs, buckets);
  return {
    machineId: m.id,
    from: new Date(fromMs).toISOString(),
    to: new Date(toMs).toISOString(),
    bucketMs: trend.widthMs,
    bands: bands === undefined ? null : { warning: bands.warning, alarm: bands.alarm },
    baselineId: baseline?.id ?? null,
    buckets: trend.buckets.map(roundBucket),
  };
}

type App = Parameters<FastifyPluginAsyncZod<{ ctx: ApiContext }>>[0];

function resultsRoute(app: App, ctx: ApiContext): void {
  app.get(
    '/machines/:id/results',
    {
      schema: {
        tags: ['results'],
        summary: 'Computed results, newest first, paginated',
        params: idParam,
        querystring: rangeQuery.extend(pageQuery.shape),
        response: { 200: page(resultSchema), ...errorResponses },
      },
    },
    async (request) => {
      await machineOr404(ctx.pool, request.params.id);
      const { fromMs, toMs } = resolveRange(request.query, ctx.now());
      const cursor = decodeCursor(request.query.cursor);
      const before = cursor === undefined ? undefined : Number(cursor[0]);
      if (before !== undefined && !Number.isFinite(before))
        throw new ApiError('API_BAD_CURSOR', { cursor: request.query.cursor });
      const limit = request.query.limit;
      const rows = await listResults(ctx.pool, request.params.id, fromMs, toMs, limit + 1, before);
      const items = rows.slice(0, limit);
      const last = items.at(-1);
      return {
        items: items.map(resultOut),
        next: nextLink(
          request.url,
          rows.length > limit && last !== undefined ? encodeCursor([last.time.getTime()]) : undefined,
        ),
      };
    },
  );
}

function trendRoute(app: App, ctx: ApiContext, cache: TrendCache): void {
  app.get(
    '/machines/:id/trend',
    {
      schema: {
        tags: ['results'],
        summary:
          'Downsampled efficiency, baseline, drift, specific work and power; ETag, 304 on If-None-Match',
        params: idParam,
        querystring: rangeQuery.extend({
          buckets: z.coerce.number().int().min(1).max(5000).default(600).describe('Number of buckets wanted'),
        }),
        response: { 200: trendResponse, 304: z.null().describe('Not modified'), ...errorResponses },
      },
    },
    async (request, reply) => {
      const body = await buildTrend(ctx, cache, request.params.id, request.query, {
        buckets: request.query.buckets,
      });
      return sendJsonWithEtag(request, reply, body);
    },
  );
}

function rollingRoute(app: App, ctx: ApiContext, cache: TrendCache): void {
  app.get(
    '/machines/:id/rolling',
    {
      schema: {
        tags: ['results'],
        summary: 'Rolling (windowed) efficiency: valid results averaged per window of windowS seconds',
        params: idParam,
        querystring: rangeQuery.extend({
          windowS: z.coerce
            .number()
            .int()
            .min(60)
            .max(31 * 86_400)
            .default(3600)
            .describe('Window [s]'),
        }),
        response: { 200: trendResponse, 304: z.null(), ...errorResponses },
      },
    },
    async (request, reply) => {
      const body = await buildTrend(ctx, cache, request.params.id, request.query, {
        windowS: request.query.windowS,
      });
      return sendJsonWithEtag(request, reply, body);
    },
  );
}

const finite = (v: number): number | null => (Number.isFinite(v) ? v : null);
const isoOrNull = (v: number | undefined): string | null =>
  v !== undefined && Number.isFinite(v) ? new Date(v).toISOString() : null;

/** The drift answer: the days, and the Theil-Sen rate with its forecast when an alarm level is set. */
function driftAnswer(machineId: number, days: DailyDrift[], alarmPts: number | undefined) {
  if (alarmPts === undefined)
    return {
      machineId,
      days,
      alarmPts: null,
      ratePtsPerMonth: null,
      rateLowPtsPerMonth: null,
      rateHighPtsPerMonth: null,
      forecast: {
        status: 'none' as const,
        at: null,
        earliest: null,
        latest: null,
        text: 'No bands configured: no alarm level to forecast.',
      },
    };
  const d = degradation(
    days.map((x) => x.t),
    days.map((x) => x.driftPts),
    { alarmPts },
  );
  const f = d.forecast;
  return {
    machineId,
    days,
    alarmPts,
    ratePtsPerMonth: finite(d.ratePtsPerMonth),
    rateLowPtsPerMonth: finite(d.rateLowPtsPerMonth),
    rateHighPtsPerMonth: finite(d.rateHighPtsPerMonth),
    forecast:
      f.status === 'forecast'
        ? {
            status: f.status,
            at: isoOrNull(f.atMs),
            earliest: isoOrNull(f.earliestMs),
            latest: isoOrNull(f.latestMs),
            text: 'forecast from the Theil-Sen line',
          }
        : f.status === 'reached'
          ? { status: f.status, at: isoOrNull(f.atMs), earliest: null, latest: null, text: f.reason }
          : { status: f.status, at: null, earliest: null, latest: null, text: f.text },
  };
}

function driftRoute(app: App, ctx: ApiContext): void {
  app.get(
    '/machines/:id/drift',
    {
      schema: {
        tags: ['results'],
        summary:
          'Daily drift against the active baseline and the degradation rate (Theil-Sen) with the forecast to the alarm band',
        params: idParam,
        querystring: rangeQuery,
        response: {
          200: z.object({
            machineId: z.number().int(),
            days: z.array(z.object({ t: z.number(), driftPts: z.number(), n: z.number().int() })),
            alarmPts: z.number().nullable(),
            ratePtsPerMonth: n,
            rateLowPtsPerMonth: n,
            rateHighPtsPerMonth: n,
            forecast: z.object({
              status: z.enum(['forecast', 'reached', 'none']),
              at: z.string().nullable(),
              earliest: z.string().nullable(),
              latest: z.string().nullable(),
              text: z.string(),
            }),
          }),
          ...errorResponses,
          409: errorResponses[400],
        },
      },
    },
    async (request) => {
      const m = await machineOr404(ctx.pool, request.params.id);
      const { fromMs, toMs } = resolveRange(request.query, ctx.now(), 90 * 86_400_000);
      const baseline = await readActiveBaselineRow(ctx.pool, m.id);
      if (baseline === undefined) throw new ApiError('API_NO_BASELINE', { machineId: m.id });
      const bands = await getBands(ctx.pool, m.id);
      // Every UTC day with a stored drift counts here (the analysis job's rate asks 60 points a day).
      const days = await withoutJit(ctx.pool, (c) => dailyDrift(c, m.id, fromMs, toMs, 1));
      return driftAnswer(m.id, days, bands === undefined ? undefined : -bands.alarm);
    },
  );
}

export const resultRoutes: FastifyPluginAsyncZod<{ ctx: ApiContext }> = async (app, { ctx }) => {
  const cache = new TrendCache(ctx.pool, ctx.now);
  resultsRoute(app, ctx);
  trendRoute(app, ctx, cache);
  rollingRoute(app, ctx, cache);
  driftRoute(app, ctx);
};
