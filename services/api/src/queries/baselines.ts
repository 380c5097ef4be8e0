/**
 * Reading stored baselines (the rows themselves: which one is active, for listing and for the
 * trend's cache key). The API never evaluates a baseline: the analysis job evaluates the active
 * one at each result's operating point (packages/monitor evaluateBaseline) and stores it on the
 * row, and the API reads that.
 */
import type { Baseline } from '@isentrope/monitor';
import type { Queryable } from '@isentrope/store';

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

export async function activeBaseline(db: Queryable, machineId: number): Promise<BaselineRow | undefined> {
  const { rows } = await db.query<BaselineRow>(
    `SELECT id::int, machine_id, operating_point, reference_from, reference_to, coefficients, x_min, x_max, n,
            residual_std, r_squared, statistics, active, created_at, created_by
       FROM baselines WHERE machine_id = $1 AND active`,
    [machineId],
  );
  return rows[0];
}
