import type { FastifyPluginAsyncZod } from 'fastify-type-provider-zod';
import { z } from 'zod';
import type { ApiContext } from '../context.js';
import { ApiError } from '../errors.js';
import { notModified } from '../http/etag.js';
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
import { CURRENT_WINDOW_MS, type FleetRow, fleetRows, HEALTH_WINDOW_MS } from '../queries/fleet.js';
import { fleetBand, fleetState } from '../queries/fleet-state.js';
import { getMachine, getTag, listMachines, listSites, listTags, type TagRow } from '../queries/machines.js';
import { listSamples, sampleTrend } from '../queries/samples.js';

const machineKind = z.enum(['turbine', 'compressor', 'pump', 'fan']);

const siteSchema = z.object({
  id: z.number().int(),
  slug: z.string(),
  name: z.string(),
  timeZone: z.string(),
  ambientPressure: z.string().nullable(),
  elevationM: z.number().nullable(),
});

const machineSchema = z.object({
  id: z.number().int(),
  site: z.string(),
  slug: z.string(),
  name: z.string(),
  kind: machineKind,
  fluid: z.unknown(),
  ratings: z.record(z.string(), z.unknown()),
  driverEfficiency: z.number().nullable(),
  outOfService: z.boolean(),
  keyTags: z.array(z.string()),
  retiredAt: z.string().nullable(),
});

const fleetItem = z.object({
  id: z.number().int(),
  site: z.string(),
  slug: z.string(),
  name: z.string(),
  kind: machineKind,
  outOfService: z.boolean(),
  retired: z.boolean(),
  current: z
    .object({
      windowEnd: z.string(),
      windowMs: z.number(),
      n: z.number().int(),
      efficiency: z.number().nullable().describe('Mean isentropic efficiency over the window [-]'),
      uEfficiency: z.number().nullable().describe('RMS standard uncertainty of one result [-]'),
      baseline: z.number().nullable().describe('Mean baseline efficiency at the same operating points [-]'),
      driftPts: z.number().nullable().describe('Efficiency minus baseline [%-points], negative = loss'),
      power: z.number().nullable().describe('Mean power [W]'),
      operatingPoint: z.number().nullable(),
    })
    .nullable(),
  band: z
    .enum(['normal', 'warning', 'alarm', 'unknown'])
    .describe("The drift band's severity as the alert job stored it"),
  state: z
    .object({
      key: z.enum(['out-of-service', 'no-data', 'alarm', 'warning', 'normal', 'unknown']),
      label: z.string(),
      detail: z.string(),
    })
    .describe('What to show first: the band, or why it says nothing about today'),
  bands: z.object({ warning: z.number(), alarm: z.number() }).nullable(),
  hasBaseline: z.boolean(),
  health: z.object({
    windowMs: z.number(),
    results: z.number().int(),
    valid: z.number().int(),
    validShare: z.number().nullable(),
    lastResult: z.string().nullable(),
    lastFlags: z.array(z.string()),
  }),
  openAlerts: z.number().int(),
  openAlertsByCategory: z
    .object({ drift: z.number().int(), instrument: z.number().int() })
    .describe('Open alerts on efficiency drift and on instruments, kept apart'),
});

function fleetItemOut(r: FleetRow, nowMs: number): z.infer<typeof fleetItem> {
  return {
    id: r.id,
    site: r.site_slug,
    slug: r.slug,
    name: r.name,
    kind: r.kind,
    outOfService: r.out_of_service,
    retired: r.retired_at !== null,
    current:
      r.last_valid_time === null
        ? null
        : {
            windowEnd: r.last_valid_time.toISOString(),
            windowMs: CURRENT_WINDOW_MS,
            n: r.n_current,
            efficiency: r.eff,
            uEfficiency: r.u_eff,
            baseline: r.baseline,
            driftPts: r.drift,
            power: r.power,
            operatingPoint: r.x,
          },
    band: fleetBand(r),
    state: fleetState(r, nowMs),
    bands: r.warning !== null && r.alarm !== null ? { warning: r.warning, alarm: r.alarm } : null,
    hasBaseline: r.baseline_id !== null,
    health: {
      windowMs: HEALTH_WINDOW_MS,
      results: r.n_health,
      valid: r.n_health_valid,
      validShare: r.n_health > 0 ? r.n_health_valid / r.n_health : null,
      lastResult: r.last_time?.toISOString() ?? null,
      lastFlags: r.last_flags ?? [],
    },
    openAlerts: r.open_alerts,
    openAlertsByCategory: { drift: r.open_drift, instrument: r.open_instrument },
  };
}

const tagSchema = z.object({
  id: z.number().int(),
  machineId: z.number().int().nullable(),
  name: z.string(),
  description: z.string().nullable(),
  role: z.string(),
  unit: z.string(),
  validMin: z.number().nullable(),
  validMax: z.number().nullable(),
  retired: z.boolean(),
  last: z.object({ time: z.string(), value: z.number() }).nullable(),
});

function tagOut(t: TagRow): z.infer<typeof tagSchema> {
  return {
    id: t.id,
    machineId: t.machine_id,
    name: t.name,
    description: t.description,
    role: t.role,
    unit: t.unit,
    validMin: t.valid_min,
    validMax: t.valid_max,
    retired: t.retired_at !== null,
    last:
      t.last_time !== null && t.last_value !== null
        ? { time: t.last_time.toISOString(), value: t.last_value }
        : null,
  };
}

const trendQuery = rangeQuery.extend({
  buckets: z.coerce
    .number()
    .int()
    .min(1)
    .max(5000)
    .default(600)
    .describe('Number of buckets (points) wanted'),
});

const machineOut = (m: Awaited<ReturnType<typeof listMachines>>[number]): z.infer<typeof machineSchema> => ({
  id: m.id,
  site: m.site_slug,
  slug: m.slug,
  name: m.name,
  kind: m.kind,
  fluid: m.fluid,
  ratings: m.ratings,
  driverEfficiency: m.driver_efficiency,
  outOfService: m.out_of_service,
  keyTags: m.key_tags,
  retiredAt: m.retired_at?.toISOString() ?? null,
});

type App = Parameters<FastifyPluginAsyncZod<{ ctx: ApiContext }>>[0];

function sitesRoute(app: App, ctx: ApiContext): void {
  app.get(
    '/sites',
    {
      schema: {
        tags: ['plant'],
        summary: 'Sites',
        response: { 200: z.object({ items: z.array(siteSchema) }), ...errorResponses },
      },
    },
    async () => ({
      items: (await listSites(ctx.pool)).map((s) => ({
        id: s.id,
        slug: s.slug,
        name: s.name,
        timeZone: s.time_zone,
        ambientPressure: s.ambient_pressure,
        elevationM: s.elevation_m,
      })),
    }),
  );
}

function fleetRoute(app: App, ctx: ApiContext): void {
  app.get(
    '/fleet',
    {
      schema: {
        tags: ['plant'],
        summary: 'Every machine with its current efficiency, drift against baseline, band and data health',
        response: {
          200: z.object({ generatedAt: z.string(), items: z.array(fleetItem) }),
          ...errorResponses,
        },
      },
    },
    async () => {
      const now = ctx.now();
      const rows = await fleetRows(ctx.pool, now);
      return {
        generatedAt: new Date(now).toISOString(),
        items: rows.map((r) => fleetItemOut(r, now)),
      };
    },
  );
}

function machinesRoute(app: App, ctx: ApiContext): void {
  app.get(
    '/machines',
    {
      schema: {
        tags: ['plant'],
        summary: 'Machines',
        response: { 200: z.object({ items: z.array(machineSchema) }), ...errorResponses },
      },
    },
    async () => ({ items: (await listMachines(ctx.pool)).map(machineOut) }),
  );
}

function machineRoute(app: App, ctx: ApiContext): void {
  app.get(
    '/machines/:id',
    {
      schema: {
        tags: ['plant'],
        summary: 'One machine',
        params: idParam,
        response: { 200: machineSchema, ...errorResponses },
      },
    },
    async (request) => {
      const m = await getMachine(ctx.pool, request.params.id);
      if (m === undefined) throw new ApiError('API_NOT_FOUND', { entity: 'machine', id: request.params.id });
      return machineOut(m);
    },
  );
}

function tagsRoute(app: App, ctx: ApiContext): void {
  app.get(
    '/tags',
    {
      schema: {
        tags: ['plant'],
        summary: 'Tags, optionally of one machine, with their last value',
        querystring: z.object({ machine: z.coerce.number().int().positive().optional() }),
        response: { 200: z.object({ items: z.array(tagSchema) }), ...errorResponses },
      },
    },
    async (request) => ({ items: (await listTags(ctx.pool, request.query.machine)).map(tagOut) }),
  );
}

function tagRoute(app: App, ctx: ApiContext): void {
  app.get(
    '/tags/:id',
    {
      schema: {
        tags: ['plant'],
        summary: 'One tag',
        params: idParam,
        response: { 200: tagSchema, ...errorResponses },
      },
    },
    async (request) => {
      const t = await getTag(ctx.pool, request.params.id);
      if (t === undefined) throw new ApiError('API_NOT_FOUND', { entity: 'tag', id: request.params.id });
      return tagOut(t);
    },
  );
}

function tagSamplesRoute(app: App, ctx: ApiContext): void {
  app.get(
    '/tags/:id/samples',
    {
      schema: {
        tags: ['samples'],
        summary: 'Raw samples as received (tag unit, UTC), oldest first, paginated',
        params: idParam,
        querystring: rangeQuery.extend(pageQuery.shape),
        response: {
          200: page(z.object({ time: z.string(), value: z.number(), quality: z.number().int() })),
          ...errorResponses,
        },
      },
    },
    async (request) => {
      const { fromMs, toMs } = resolveRange(request.query, ctx.now());
      if ((await getTag(ctx.pool, request.params.id)) === undefined)
        throw new ApiError('API_NOT_FOUND', { entity: 'tag', id: request.params.id });
      const cursor = decodeCursor(request.query.cursor);
      const after = cursor === undefined ? undefined : Number(cursor[0]);
      if (after !== undefined && !Number.isFinite(after))
        throw new ApiError('API_BAD_CURSOR', { cursor: request.query.cursor });
      const limit = request.query.limit;
      const rows = await listSamples(ctx.pool, request.params.id, fromMs, toMs, limit + 1, after);
      const more = rows.length > limit;
      const items = rows.slice(0, limit);
      const last = items.at(-1);
      return {
        items: items.map((r) => ({ time: r.time.toISOString(), value: r.value, quality: r.quality })),
        next: nextLink(
          request.url,
          more && last !== undefined ? encodeCursor([last.time.getTime()]) : undefined,
        ),
      };
    },
  );
}

function tagTrendRoute(app: App, ctx: ApiContext): void {
  app.get(
    '/tags/:id/trend',
    {
      schema: {
        tags: ['samples'],
        summary: 'Downsampled samples (min, mean, max per bucket); ETag, 304 on If-None-Match',
        params: idParam,
        querystring: trendQuery,
        response: {
          200: z.object({
            tagId: z.number().int(),
            unit: z.string(),
            from: z.string(),
            to: z.string(),
            bucketMs: z.number(),
            source: z.string(),
            buckets: z.array(
              z.object({
                t: z.number(),
                min: z.number(),
                max: z.number(),
                mean: z.number(),
                count: z.number().int(),
              }),
            ),
          }),
          304: z.null().describe('Not modified'),
          ...errorResponses,
        },
      },
    },
    async (request, reply) => {
      const { fromMs, toMs } = resolveRange(request.query, ctx.now());
      const tag = await getTag(ctx.pool, request.params.id);
      if (tag === undefined) throw new ApiError('API_NOT_FOUND', { entity: 'tag', id: request.params.id });
      const trend = await sampleTrend(ctx.pool, tag.id, fromMs, toMs, request.query.buckets);
      const body = {
        tagId: tag.id,
        unit: tag.unit,
        from: new Date(fromMs).toISOString(),
        to: new Date(toMs).toISOString(),
        bucketMs: trend.widthMs,
        source: trend.source,
        buckets: trend.buckets,
      };
      if (notModified(request, reply, body)) return reply;
      return body;
    },
  );
}

export const machineRoutes: FastifyPluginAsyncZod<{ ctx: ApiContext }> = async (app, { ctx }) => {
  sitesRoute(app, ctx);
  fleetRoute(app, ctx);
  machinesRoute(app, ctx);
  machineRoute(app, ctx);
  tagsRoute(app, ctx);
  tagRoute(app, ctx);
  tagSamplesRoute(app, ctx);
  tagTrendRoute(app, ctx);
};
