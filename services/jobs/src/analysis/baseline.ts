/**
 * Stored baselines: read the machine's active baseline, and fit one from the reference period the
 * plant file names (machines.baseline_spec: { operatingPoint, reference: { from, to }, degree })
 * once the compute job has results past the period's end.
 *
 * A row keeps the polynomial in the raw operating point (coefficients, lowest power first) and the
 * whole monitor Baseline in statistics.model (as the API's fit endpoint writes it), so that the
 * baseline's own uncertainty (covariance of the fit) reaches the drift.
 */
import {
  type Baseline,
  type BaselineFitOptions,
  fitBaseline,
  MonitorError,
  type PolynomialBaseline,
} from '@isentrope/monitor';
import { baselineSchema } from '@isentrope/plant';
import {
  appendAudit,
  type BaselineRow,
  type Queryable,
  readActiveBaselineRow,
  USABLE_RESULT_SQL,
} from '@isentrope/store';
import { JobsError } from '../errors.js';

export interface StoredBaseline {
  readonly id: number;
  readonly machineId: number;
  readonly operatingPoint: 'load' | 'massFlow' | 'pressureRatio';
  readonly model: Baseline;
  /** [ms] */
  readonly referenceFromMs: number;
  readonly referenceToMs: number;
}

/**
 * A baseline row written without the fitted model (coefficients only): the polynomial itself,
 * every coefficient of it (evaluateBaseline sums them all), with no covariance (its uncertainty
 * is then unknown and taken as 0; the row says so by having no model). A constant row is the
 * line c0 + 0 x. A row with no coefficient or a non-finite one is refused (JOBS_BAD_BASELINE),
 * never evaluated to NaN.
 */
export function modelFromCoefficients(r: BaselineRow): PolynomialBaseline {
  const degree = r.coefficients.length - 1;
  const bad = r.coefficients.findIndex((c) => !Number.isFinite(c));
  if (degree < 0 || bad >= 0)
    throw new JobsError(
      'JOBS_BAD_BASELINE',
      degree < 0
        ? `baseline ${r.id} (machine ${r.machine_id}) has no coefficients and no fitted model; fit the baseline again`
        : `baseline ${r.id} (machine ${r.machine_id}, degree ${degree}): coefficient ${bad} (of x^${bad}) is ${r.coefficients[bad]}, not a finite number; fit the baseline again`,
      bad >= 0 ? { baselineId: r.id, degree, index: bad } : { baselineId: r.id, degree },
    );
  const c = degree === 0 ? [r.coefficients[0]!, 0] : [...r.coefficients];
  const p = c.length;
  return {
    kind: 'polynomial',
    degree: p - 1,
    coefficients: c,
    scaledCoefficients: c,
    xCenter: 0,
    xHalfRange: 1,
    covariance: new Array<number>(p * p).fill(0),
    residualStd: r.residual_std ?? Number.NaN,
    r2: r.r_squared ?? Number.NaN,
    n: r.n,
    xMin: r.x_min ?? Number.NEGATIVE_INFINITY,
    xMax: r.x_max ?? Number.POSITIVE_INFINITY,
  };
}

export async function readActiveBaseline(
  db: Queryable,
  machineId: number,
): Promise<StoredBaseline | undefined> {
  const r = await readActiveBaselineRow(db, machineId);
  if (r === undefined) return undefined;
  const m = r.statistics.model as Baseline | undefined;
  const model =
    m !== undefined && (m.kind === 'polynomial' || m.kind === 'binned') ? m : modelFromCoefficients(r);
  return {
    id: r.id,
    machineId: r.machine_id,
    operatingPoint: r.operating_point,
    model,
    referenceFromMs: r.reference_from.getTime(),
    referenceToMs: r.reference_to.getTime(),
  };
}

export type BaselineFitOutcome =
  | { readonly status: 'fitted'; readonly baseline: StoredBaseline }
  | { readonly status: 'no-spec' | 'waiting-for-results' | 'taken-elsewhere' }
  | { readonly status: 'failed'; readonly code: string; readonly message: string };

type BaselineSpec = ReturnType<typeof baselineSchema.parse>;

/** Store a fitted baseline as the active one unless another instance stored one first (then undefined). */
async function insertSpecBaseline(
  db: Queryable,
  machineId: number,
  spec: BaselineSpec,
  model: Baseline,
  method: BaselineFitOptions['method'],
  nowMs: number,
): Promise<number | undefined> {
  const fromMs = Date.parse(spec.reference.from);
  const toMs = Date.parse(spec.reference.to);
  const coefficients =
    model.kind === 'polynomial' ? [...model.coefficients] : [model.bins[0]?.median ?? Number.NaN];
  const ins = await db.query<{ id: number }>(
    `INSERT INTO baselines (machine_id, operating_point, reference_from, reference_to, coefficients, x_min, x_max, n,
                            residual_std, r_squared, statistics, active, created_at, created_by)
     VALUES ($1, $2, to_timestamp($3::float8 / 1000), to_timestamp($4::float8 / 1000), $5, $6, $7, $8, $9, $10, $11, true,
             to_timestamp($12::float8 / 1000), 'system')
     ON CONFLICT (machine_id) WHERE active DO NOTHING
     RETURNING id::int`,
    [
      machineId,
      spec.operatingPoint,
      fromMs,
      toMs,
      coefficients,
      model.xMin,
      model.xMax,
      model.n,
      Number.isFinite(model.residualStd) ? model.residualStd : null,
      Number.isFinite(model.r2) ? model.r2 : null,
      JSON.stringify({
        model,
        method,
        degree: spec.degree,
        source: 'plant file reference period',
      }),
      nowMs,
    ],
  );
  return ins.rows[0]?.id;
}

/**
 * Fit and store the baseline the plant file asks for, if the machine has none active. Waits until
 * a result exists at or after the reference period's end (the compute job has covered it). A fit
 * that cannot be made (too few steady valid points, a singular design) is reported, not stored.
 * Degree 0 (a constant) is fitted as one bin of medians, the robust constant.
 */
export async function fitBaselineFromSpec(
  db: Queryable,
  machineId: number,
  baselineSpec: unknown,
  nowMs: number,
): Promise<BaselineFitOutcome> {
  const parsed = baselineSchema.safeParse(baselineSpec);
  if (!parsed.success) return { status: 'no-spec' };
  const spec = parsed.data;
  const fromMs = Date.parse(spec.reference.from);
  const toMs = Date.parse(spec.reference.to);
  const newest = await db.query<{ t: number | null }>(
    `SELECT (extract(epoch FROM max(time)) * 1000)::float8 AS t FROM results WHERE machine_id = $1 AND time >= to_timestamp($2::float8 / 1000)`,
    [machineId, toMs - 60_000],
  );
  const t = newest.rows[0]?.t ?? null;
  if (t === null) return { status: 'waiting-for-results' };
  const pts = await db.query<{ x: number; y: number }>(
    `SELECT operating_point AS x, efficiency AS y FROM results
      WHERE machine_id = $1 AND time >= to_timestamp($2::float8 / 1000) AND time < to_timestamp($3::float8 / 1000)
        AND operating_point IS NOT NULL AND ${USABLE_RESULT_SQL}
      ORDER BY time`,
    [machineId, fromMs, toMs],
  );
  const x = pts.rows.map((r) => r.x);
  const y = pts.rows.map((r) => r.y);
  const options: BaselineFitOptions =
    spec.degree === 0
      ? { method: 'binned', bins: 1, minPerBin: 5 }
      : { method: 'polynomial', degree: spec.degree as 1 | 2 | 3 };
  let model: Baseline;
  try {
    model = fitBaseline(x, y, options);
  } catch (error) {
    if (error instanceof MonitorError) return { status: 'failed', code: error.code, message: error.message };
    throw error;
  }
  const id = await insertSpecBaseline(db, machineId, spec, model, options.method, nowMs);
  if (id === undefined) return { status: 'taken-elsewhere' };
  await appendAudit(db, {
    actor: 'system',
    action: 'baseline.fit',
    entity: 'baseline',
    entityId: id,
    after: {
      machineId,
      reference: spec.reference,
      degree: spec.degree,
      n: model.n,
      residualStd: model.residualStd,
      r2: model.r2,
    },
  });
  return {
    status: 'fitted',
    baseline: {
      id,
      machineId,
      operatingPoint: spec.operatingPoint,
      model,
      referenceFromMs: fromMs,
      referenceToMs: toMs,
    },
  };
}
