/**
 * Stored baseline rows (migrations/0001): the polynomial in the raw operating point (lowest power
 * first) and, in `statistics.model`, the whole fitted packages/monitor Baseline when the fit wrote
 * it. Read here once for the API (listing, the active one) and the analysis job (which evaluates
 * it, packages/monitor evaluateBaseline).
 */
import type { Queryable } from './errors.js';

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
  /** The fitted model (a packages/monitor Baseline) under `model`, when the fit stored it. */
  statistics: { model?: unknown } & Record<string, unknown>;
  active: boolean;
  created_at: Date;
  created_by: string;
}

/** The columns of a BaselineRow, for SELECT and RETURNING. */
export const BASELINE_COLUMNS = `id::int, machine_id, operating_point, reference_from, reference_to, coefficients, x_min, x_max, n,
  residual_std, r_squared, statistics, active, created_at, created_by`;

/** The machine's active baseline row, if it has one. */
export async function readActiveBaselineRow(
  db: Queryable,
  machineId: number,
): Promise<BaselineRow | undefined> {
  const { rows } = await db.query<BaselineRow>(
    `SELECT ${BASELINE_COLUMNS} FROM baselines WHERE machine_id = $1 AND active`,
    [machineId],
  );
  return rows[0];
}
