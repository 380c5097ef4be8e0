import {
  type HsChart,
  type HsPoint,
  hsChartGeometry,
  type MachineResult,
  ThermoError,
} from '@isentrope/thermo';
import type { FastifyPluginAsyncZod } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { fluidFor } from '../chart/fluid.js';
import type { ApiContext } from '../context.js';
import { ApiError } from '../errors.js';
import { notModified } from '../http/etag.js';
import { errorResponses, idParam, problemSchema } from '../http/schemas.js';
import { getMachine } from '../queries/machines.js';
import { latestResult, type ResultRow } from '../queries/results.js';

const point = z.object({
  s: z.number().describe('[J/(kg K)]'),
  h: z.number().describe('[J/kg]'),
  T: z.number().nullable().describe('[K]; null on a drawn straight line'),
});
const isobar = z.object({ p: z.number().describe('[Pa]'), points: z.array(point) });

export const hsChartResponse = z.object({
  machineId: z.number().int(),
  time: z.string().describe('Time of the result drawn'),
  fluid: z.string(),
  efficiency: z.number().nullable(),
  inletIsobar: isobar,
  outletIsobar: isobar,
  dome: z.object({ liquid: z.array(point), vapour: z.array(point) }).nullable(),
  inlet: point,
  outletIsentropic: point,
  outlet: point.nullable(),
  isentropicPath: z.array(point),
  actualPath: z.array(point),
  pathKind: z.enum(['polytropic', 'straight']),
  pathEfficiency: z.number().nullable(),
  entropyGeneration: z.number().nullable().describe('s_out - s_in [J/(kg K)]'),
  uEntropyGeneration: z.number().nullable(),
});

const pt = (p: HsPoint): z.infer<typeof point> => ({ s: p.s, h: p.h, T: Number.isFinite(p.T) ? p.T : null });

function num(v: number | null): number {
  return v ?? Number.NaN;
}

/** A MachineResult carrying the stored state points, enough for the chart geometry. */
export function machineResultFromRow(kind: MachineResult['kind'], r: ResultRow): MachineResult {
  return {
    kind,
    inlet: { p: num(r.p_in), T: num(r.t_in), h: num(r.h_in), s: num(r.s_in), v: Number.NaN },
    outlet: { p: num(r.p_out), T: num(r.t_out), h: num(r.h_out), s: num(r.s_out), v: Number.NaN },
    outletIsentropic: {
      p: num(r.p_out),
      T: num(r.t_out_s),
      h: num(r.h_out_s),
      s: num(r.s_in),
      v: Number.NaN,
    },
    isentropicEfficiency: r.efficiency ?? undefined,
    isentropicSpecificWork: Number.NaN,
    entropyGeneration: r.entropy_generation ?? undefined,
    flags: [],
    valid: r.valid,
  };
}

function chartOut(
  machineId: number,
  r: ResultRow,
  fluidName: string,
  c: HsChart,
): z.infer<typeof hsChartResponse> {
  return {
    machineId,
    time: r.time.toISOString(),
    fluid: fluidName,
    efficiency: r.efficiency,
    inletIsobar: { p: c.inletIsobar.p, points: c.inletIsobar.points.map(pt) },
    outletIsobar: { p: c.outletIsobar.p, points: c.outletIsobar.points.map(pt) },
    dome: c.dome === undefined ? null : { liquid: c.dome.liquid.map(pt), vapour: c.dome.vapour.map(pt) },
    inlet: pt(c.inlet),
    outletIsentropic: pt(c.outletIsentropic),
    outlet: c.outlet === undefined ? null : pt(c.outlet),
    isentropicPath: c.isentropicPath.map(pt),
    actualPath: c.actualPath.map(pt),
    pathKind: c.pathKind,
    pathEfficiency: c.pathEfficiency ?? null,
    entropyGeneration: c.entropyGeneration ?? null,
    uEntropyGeneration: r.u_entropy_generation,
  };
}

export const chartRoutes: FastifyPluginAsyncZod<{ ctx: ApiContext }> = async (app, { ctx }) => {
  app.get(
    '/machines/:id/hs-chart',
    {
      schema: {
        tags: ['results'],
        summary:
          'h-s chart of the newest valid result: inlet and outlet isobars, saturation dome (water), inlet, ideal and real outlet, paths, entropy generation',
        params: idParam,
        response: { 200: hsChartResponse, 304: z.null(), ...errorResponses, 422: problemSchema },
      },
    },
    async (request, reply) => {
      const m = await getMachine(ctx.pool, request.params.id);
      if (m === undefined) throw new ApiError('API_NOT_FOUND', { entity: 'machine', id: request.params.id });
      const r = await latestResult(ctx.pool, m.id, true);
      if (r === undefined || r.p_in === null || r.s_in === null || r.h_in === null || r.p_out === null)
        throw new ApiError('API_NO_RESULT', { machineId: m.id, what: 'valid state-point' });
      const { fluid, saturation } = fluidFor(m.fluid);
      const mr = machineResultFromRow(m.kind, r);
      let geometry: HsChart;
      try {
        geometry = hsChartGeometry(mr, fluid, { saturation });
      } catch (error) {
        // The polytropic path search can step outside the property model's range (seen for air
        // compressors, where a low trial efficiency overshoots the NASA range); draw the
        // straight line then, which needs only the end states.
        if (!(error instanceof ThermoError)) throw error;
        geometry = hsChartGeometry(mr, fluid, { saturation, path: 'straight' });
      }
      const body = chartOut(m.id, r, fluid.name, geometry);
      if (notModified(request, reply, body)) return reply;
      return body;
    },
  );
};
