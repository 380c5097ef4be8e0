/**
 * Reading stored baselines. A baseline row keeps its polynomial coefficients in the raw operating
 * point (lowest power first); when the row's `statistics.model` holds the whole fitted monitor
 * Baseline (as written by the fit endpoint) its uncertainty is used too.
 */
import { type Baseline, evaluateBaseline } from '@isentrope/monitor';
import type pg from 'pg';

export interface BaselineRow {
  id: number;
  machine_id: number;
  operating_point: 'load' | 'massFlow' | 'pressureRatio';
  reference_from: Date;
  reference_to: Date;
  coefficients: number[];
  x_min: number | null;
  x_max: number | null;
  n: number;
  residual_std: number | null;
  r_squared: number | null;
  statistics: { model?: Baseline } & Record<string, unknown>;
  active: boolean;
  created_at: Date;
  created_by: string;
}

type Queryable = Pick<pg.Pool | pg.PoolClient, 'query'>;

export async function activeBaseline(db: Queryable, machineId: number): Promise<BaselineRow | undefined> {
  const { rows } = await db.query<BaselineRow>(
    `SELECT id::int, machine_id, operating_point, reference_from, reference_to, coefficients, x_min, x_max, n,
            residual_std, r_squared, statistics, active, created_at, created_by
       FROM baselines WHERE machine_id = $1 AND active`,
    [machineId],
  );
  return rows[0];
}

export interface BaselineAt {
  /** [-] */
  readonly efficiency: number;
  /** Standard uncertainty of the baseline [-]; 0 when the row holds no covariance. */
  readonly u: number;
  readonly outOfRange: boolean;
}

/** Baseline efficiency at operating point x. */
export function baselineAt(row: BaselineRow, x: number): BaselineAt {
  const model = row.statistics.model;
  if (model !== undefined && (model.kind === 'polynomial' || model.kind === 'binned'))
    return evaluateBaseline(model, x);
  let v = 0;
  for (let k = row.coefficients.length - 1; k >= 0; k--) v = v * x + (row.coefficients[k] ?? 0);
  const outOfRange = (row.x_min !== null && x < row.x_min) || (row.x_max !== null && x > row.x_max);
  return { efficiency: v, u: 0, outOfRange };
}

/** Coefficients padded to 4 (c0..c3) for SQL evaluation of the polynomial; undefined when there are more. */
export function sqlCoefficients(row: BaselineRow | undefined): [number, number, number, number] | undefined {
  if (row === undefined) return undefined;
  const c = row.coefficients;
  if (c.length > 4 || c.length === 0) return undefined;
  return [c[0] ?? 0, c[1] ?? 0, c[2] ?? 0, c[3] ?? 0];
}
