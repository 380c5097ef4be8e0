import { readDailyDriftMeans } from '@isentrope/store';
import type pg from 'pg';
import { withoutJit } from './nojit.js';

export interface ResultRow {
  machine_id: number;
  time: Date;
  p_in: number | null;
  t_in: number | null;
  h_in: number | null;
  s_in: number | null;
  p_out: number | null;
  t_out: number | null;
  h_out: number | null;
  s_out: number | null;
  t_out_s: number | null;
  h_out_s: number | null;
  mass_flow: number | null;
  efficiency: number | null;
  u_efficiency: number | null;
  polytropic_efficiency: number | null;
  u_polytropic_efficiency: number | null;
  specific_work: number | null;
  u_specific_work: number | null;
  power: number | null;
  u_power: number | null;
  entropy_generation: number | null;
  u_entropy_generation: number | null;
  operating_point: number | null;
  steady: boolean;
  flags: string[];
  valid: boolean;
}

const RESULT_COLUMNS = `machine_id, time, p_in, t_in, h_in, s_in, p_out, t_out, h_out, s_out, t_out_s, h_out_s,
  mass_flow, efficiency, u_efficiency, polytropic_efficiency, u_polytropic_efficiency, specific_work,
  u_specific_work, power, u_power, entropy_generation, u_entropy_generation, operating_point, steady, flags, valid`;

/** Results in [from, to), newest first, keyset-paginated on time. */
export async function listResults(
  pool: pg.Pool,
  machineId: number,
  fromMs: number,
  toMs: number,
  limit: number,
  beforeMs: number | undefined,
): Promise<ResultRow[]> {
  const { rows } = await pool.query<ResultRow>(
    `SELECT ${RESULT_COLUMNS} FROM results
      WHERE machine_id = $1 AND time >= $2 AND time < $3 AND ($4::timestamptz IS NULL OR time < $4)
      ORDER BY time DESC LIMIT $5`,
    [machineId, new Date(fromMs), new Date(toMs), beforeMs === undefined ? null : new Date(beforeMs), limit],
  );
  return rows;
}

/** The newest result of a machine (valid only when asked). */
export async function latestResult(
  pool: pg.Pool,
  machineId: number,
  validOnly: boolean,
): Promise<ResultRow | undefined> {
  const { rows } = await pool.query<ResultRow>(
    `SELECT ${RESULT_COLUMNS} FROM results WHERE machine_id = $1 AND ($2::boolean IS FALSE OR valid)
      ORDER BY time DESC LIMIT 1`,
    [machineId, validOnly],
  );
  return rows[0];
}

export interface TrendBucket {
  /** Bucket start [ms]. */
  t: number;
  /** Results in the bucket, and how many were valid (only valid ones enter the figures). */
  n: number;
  nValid: number;
  efficiencyMean: number | null;
  efficiencyMin: number | null;
  efficiencyMax: number | null;
  /** RMS of the results' standard uncertainties [-] (the spread one result carries). */
  uEfficiency: number | null;
  /** Mean baseline efficiency at the results' operating points [-]. */
  baseline: number | null;
  /** Mean of (efficiency - baseline) [%-points]. */
  driftPts: number | null;
  specificWorkMean: number | null;
  powerMean: number | null;
  powerMin: number | null;
  powerMax: number | null;
  operatingPointMean: number | null;
  entropyGenerationMean: number | null;
}

/**
 * Downsampled results over [from, to): `buckets` equal buckets, min/mean/max per bucket, computed
 * in PostgreSQL so that a year of minute results answers in one aggregate scan. Baseline and drift
 * are the means of what the analysis job stored on each row (its baseline at the row's operating
 * point), so the drift mean is exact, not the baseline at the mean operating point.
 */
export async function resultTrend(
  pool: pg.Pool,
  machineId: number,
  fromMs: number,
  toMs: number,
  buckets: number,
): Promise<{ widthMs: number; buckets: TrendBucket[] }> {
  const widthMs = Math.max(1000, Math.ceil((toMs - fromMs) / buckets));
  const { rows } = await withoutJit(pool, (client) =>
    client.query<{
      b: number;
      n: number;
      n_valid: number;
      eff: number | null;
      eff_min: number | null;
      eff_max: number | null;
      u_eff: number | null;
      baseline: number | null;
      drift: number | null;
      w: number | null;
      p: number | null;
      p_min: number | null;
      p_max: number | null;
      x: number | null;
      sgen: number | null;
    }>(
      `SELECT floor((extract(epoch FROM time) * 1000 - $2::float8) / $4::float8)::int AS b,
            count(*)::int AS n,
            count(*) FILTER (WHERE valid)::int AS n_valid,
            avg(efficiency) FILTER (WHERE valid) AS eff,
            min(efficiency) FILTER (WHERE valid) AS eff_min,
            max(efficiency) FILTER (WHERE valid) AS eff_max,
            sqrt(avg(u_efficiency * u_efficiency) FILTER (WHERE valid)) AS u_eff,
            avg(baseline_efficiency) FILTER (WHERE valid AND efficiency IS NOT NULL) AS baseline,
            avg(drift) FILTER (WHERE valid) AS drift,
            avg(specific_work) FILTER (WHERE valid) AS w,
            avg(power) FILTER (WHERE valid) AS p,
            min(power) FILTER (WHERE valid) AS p_min,
            max(power) FILTER (WHERE valid) AS p_max,
            avg(operating_point) FILTER (WHERE valid) AS x,
            avg(entropy_generation) FILTER (WHERE valid) AS sgen
       FROM results
      WHERE machine_id = $1 AND time >= to_timestamp($2::float8 / 1000) AND time < to_timestamp($3::float8 / 1000)
      GROUP BY 1 ORDER BY 1`,
      [machineId, fromMs, toMs, widthMs],
    ),
  );
  return {
    widthMs,
    buckets: rows.map((r) => ({
      t: fromMs + r.b * widthMs,
      n: r.n,
      nValid: r.n_valid,
      efficiencyMean: r.eff,
      efficiencyMin: r.eff_min,
      efficiencyMax: r.eff_max,
      uEfficiency: r.u_eff,
      baseline: r.baseline,
      driftPts: r.drift,
      specificWorkMean: r.w,
      powerMean: r.p,
      powerMin: r.p_min,
      powerMax: r.p_max,
      operatingPointMean: r.x,
      entropyGenerationMean: r.sgen,
    })),
  };
}

const DAY_MS = 86_400_000;

export interface DailyDrift {
  /** Day mid-point [ms]. */
  t: number;
  driftPts: number;
  n: number;
}

/**
 * Daily means of the stored drift over usable results (steady, valid, fault-free) on the UTC days
 * of [from, to), days with at least minPoints, for the Theil-Sen rate: the store's reader, on UTC
 * day bounds.
 */
export async function dailyDrift(
  pool: Pick<pg.Pool, 'query'>,
  machineId: number,
  fromMs: number,
  toMs: number,
  minPoints: number,
): Promise<DailyDrift[]> {
  const first = Math.floor(fromMs / DAY_MS) * DAY_MS;
  const days = Array.from({ length: Math.max(0, Math.ceil((toMs - first) / DAY_MS)) }, (_, i) => ({
    fromMs: first + i * DAY_MS,
    toMs: first + (i + 1) * DAY_MS,
  }));
  const d = await readDailyDriftMeans(pool, machineId, days, minPoints);
  return d.t.map((t, i) => ({ t, driftPts: d.driftPts[i] as number, n: d.n[i] as number }));
}
