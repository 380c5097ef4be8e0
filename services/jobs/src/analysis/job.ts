/**
 * Analysis job (runs each minute after compute, and as a backfill): per machine
 *  1. the baseline: the active one, or a fit on the plant file's reference period once results
 *     cover it (./baseline.ts);
 *  2. the drift series: for each result row, the baseline efficiency at its operating point,
 *     drift = 100 (efficiency - baseline) [%-points] and u_drift = 100 sqrt(u_eff^2 + u_base^2)
 *     (computeDrift, packages/monitor/src/baseline.ts), written onto the row; rows recomputed by
 *     the compute job, or judged on an older baseline, are pending again, and every writer of
 *     results queues the range it wrote (analysis_pending, migrations/0007);
 *  3. machine_status: rolling 1 h / 24 h / 7 d windows over steady, valid, fault-free results,
 *     and the degradation rate (Theil-Sen on daily drift means, Sen's interval) with the forecast
 *     date of reaching the alarm band (packages/monitor/src/degradation.ts).
 */
import { CAUTION, computeDrift, degradation } from '@isentrope/monitor';
import { inTransaction, type Queryable, USABLE_RESULT_SQL } from '@isentrope/store';
import type pg from 'pg';
import { bandsFor } from '../alerts/config.js';
import { runGaugeAbsoluteOnce } from '../instrument/gauge-absolute.js';
import { fitBaselineFromSpec, readActiveBaseline, type StoredBaseline } from './baseline.js';
import { finiteOrNull, type WindowFigure, windowFigure } from './windows.js';

const DAY_MS = 86_400_000;

export interface AnalysisOptions {
  /** Machines to analyse (ids); default every machine not retired. */
  readonly machineIds?: readonly number[];
  /** Grid step of the results [ms]; default 60 000 (the compute job's default). */
  readonly stepMs?: number;
  /** Rows of the drift series written per batch; default 10 000. */
  readonly batchRows?: number;
  /** Batches per machine per run; default 10 (a backfill passes Infinity). */
  readonly maxBatches?: number;
  /** Days of daily drift the degradation rate rests on; default 90 (common practice, no source). */
  readonly rateWindowDays?: number;
  /** Fewest steady valid points for a day to count in the rate; default 60 (one hour at 1 min, common practice, no source). */
  readonly minPointsPerDay?: number;
}

export interface MachineAnalysis {
  readonly machineId: number;
  readonly baselineId: number | null;
  readonly baseline: string;
  readonly driftRows: number;
  readonly status: 'written' | 'no-results';
}

interface MachineDb {
  id: number;
  kind: string;
  baseline_spec: unknown;
  status_baseline_id: number | null;
}

async function machinesToAnalyse(db: Queryable, ids: readonly number[] | undefined): Promise<MachineDb[]> {
  const res = await db.query<MachineDb>(
    `SELECT m.id, m.kind, m.baseline_spec, ms.baseline_id::int AS status_baseline_id
       FROM machines m LEFT JOIN machine_status ms ON ms.machine_id = m.id
      WHERE m.retired_at IS NULL AND ($1::int[] IS NULL OR m.id = ANY($1::int[]))
      ORDER BY m.id`,
    [ids === undefined ? null : [...ids]],
  );
  return res.rows;
}

interface PendingRow {
  t: number;
  efficiency: number | null;
  u_efficiency: number | null;
  operating_point: number | null;
  /** As text, with the microseconds a JS Date would drop. */
  computed_at: string;
}

/** Write the drift series of pending rows in [fromMs, toMs), up to `limit` rows from the oldest. */
async function writeDriftBatch(
  db: Queryable,
  machineId: number,
  baseline: StoredBaseline | undefined,
  fromMs: number,
  toMs: number,
  limit: number,
): Promise<{ rows: number; lastMs: number }> {
  const res = await db.query<PendingRow>(
    `SELECT (extract(epoch FROM time) * 1000)::float8 AS t, efficiency, u_efficiency, operating_point, computed_at::text AS computed_at
       FROM results
      WHERE machine_id = $1 AND time >= to_timestamp($2::float8 / 1000) AND time < to_timestamp($3::float8 / 1000)
        AND (analyzed_at IS NULL OR analyzed_at <> computed_at)
      ORDER BY time LIMIT $4`,
    [machineId, fromMs, toMs, limit],
  );
  if (res.rows.length === 0) return { rows: 0, lastMs: toMs };
  const n = res.rows.length;
  const t = new Array<number>(n);
  const stamp = new Array<string>(n);
  const base = new Array<number | null>(n);
  const uBase = new Array<number | null>(n);
  const drift = new Array<number | null>(n);
  const uDrift = new Array<number | null>(n);
  for (let i = 0; i < n; i++) {
    const r = res.rows[i] as PendingRow;
    t[i] = r.t;
    stamp[i] = r.computed_at;
    base[i] = uBase[i] = drift[i] = uDrift[i] = null;
    const x = r.operating_point;
    if (baseline === undefined || x === null || !Number.isFinite(x)) continue;
    const eff = r.efficiency;
    const d = computeDrift(eff ?? Number.NaN, r.u_efficiency ?? Number.NaN, baseline.model, x);
    base[i] = finiteOrNull(d.baselineEfficiency);
    uBase[i] = finiteOrNull(d.uBaseline);
    drift[i] = finiteOrNull(d.driftPts);
    uDrift[i] = finiteOrNull(d.uDriftPts);
  }
  // The row must still hold what was read (same computed_at): a concurrent recompute wins, and
  // the range it queued brings its rows to the next pass.
  await db.query(
    `UPDATE results r SET baseline_id = $2, baseline_efficiency = u.b, u_baseline = u.ub, drift = u.d, u_drift = u.ud,
            analyzed_at = r.computed_at
       FROM unnest($3::float8[], $4::text[], $5::float8[], $6::float8[], $7::float8[], $8::float8[]) AS u(t, c, b, ub, d, ud)
      WHERE r.machine_id = $1 AND r.time = to_timestamp(u.t / 1000) AND r.computed_at = u.c::timestamptz`,
    [machineId, baseline?.id ?? null, t, stamp, base, uBase, drift, uDrift],
  );
  return { rows: n, lastMs: t[n - 1] as number };
}

/** Disjoint spans [from, to) [ms] covering the given ranges, oldest first. */
export function mergeRanges(ranges: readonly (readonly [number, number])[]): [number, number][] {
  const sorted = [...ranges].sort((a, b) => a[0] - b[0]);
  const out: [number, number][] = [];
  for (const [a, b] of sorted) {
    const last = out[out.length - 1];
    if (last !== undefined && a <= last[1]) last[1] = Math.max(last[1], b);
    else out.push([a, b]);
  }
  return out;
}

/**
 * The drift series of a machine's pending rows: the ranges queued in analysis_pending (migrations
 * 0007), batch by batch from the oldest, at most `maxBatches` batches; the ranges read are then
 * replaced by what is left of them (nothing, when every batch fitted). Returns the rows written.
 */
async function writeDrift(
  pool: pg.Pool,
  machineId: number,
  baseline: StoredBaseline | undefined,
  batchRows: number,
  maxBatches: number,
): Promise<number> {
  const queued = await pool.query<{ id: string; a: number; b: number }>(
    `SELECT id, (extract(epoch FROM from_time) * 1000)::float8 AS a, (extract(epoch FROM to_time) * 1000)::float8 AS b
       FROM analysis_pending WHERE machine_id = $1`,
    [machineId],
  );
  if (queued.rows.length === 0) return 0;
  const spans = mergeRanges(queued.rows.map((r) => [r.a, r.b] as const));
  let rows = 0;
  let batches = 0;
  const left: [number, number][] = [];
  for (const [a, b] of spans) {
    let from = a;
    while (from < b) {
      if (batches >= maxBatches) {
        left.push([from, b]);
        break;
      }
      const batch = await writeDriftBatch(pool, machineId, baseline, from, b, batchRows);
      batches++;
      rows += batch.rows;
      // Grid times are whole milliseconds: the next batch starts after the last row read.
      from = batch.rows < batchRows ? b : batch.lastMs + 1;
    }
  }
  await inTransaction(pool, async (client) => {
    await client.query('DELETE FROM analysis_pending WHERE id = ANY($1::bigint[])', [
      queued.rows.map((r) => r.id),
    ]);
    for (const [a, b] of left)
      await client.query(
        `INSERT INTO analysis_pending (machine_id, from_time, to_time)
         VALUES ($1, to_timestamp($2::float8 / 1000), to_timestamp($3::float8 / 1000))`,
        [machineId, a, b],
      );
  });
  return rows;
}

interface WindowAgg {
  n: number;
  eff: number | null;
  s_eff: number | null;
  u_eff: number | null;
  nd: number;
  drift: number | null;
  s_drift: number | null;
  u_drift: number | null;
  base: number | null;
  x: number | null;
}

/** Aggregates of one trailing window [asOf - len, asOf) over usable results. */
async function windowAgg(
  db: Queryable,
  machineId: number,
  asOfMs: number,
  lengthMs: number,
): Promise<WindowAgg> {
  const res = await db.query<WindowAgg>(
    `SELECT count(*)::int AS n, avg(efficiency) AS eff, stddev_samp(efficiency) AS s_eff, avg(u_efficiency) AS u_eff,
            count(drift)::int AS nd, avg(drift) AS drift, stddev_samp(drift) AS s_drift, avg(u_drift) AS u_drift,
            avg(baseline_efficiency) AS base, avg(operating_point) AS x
       FROM results
      WHERE machine_id = $1 AND time >= to_timestamp($2::float8 / 1000) AND time < to_timestamp($3::float8 / 1000)
        AND ${USABLE_RESULT_SQL}`,
    [machineId, asOfMs - lengthMs, asOfMs],
  );
  return res.rows[0] as WindowAgg;
}

export interface WindowSummary {
  readonly efficiency: WindowFigure;
  readonly drift: WindowFigure;
  readonly baselineEfficiency: number | null;
  readonly operatingPoint: number | null;
}

export async function windowSummary(
  db: Queryable,
  machineId: number,
  asOfMs: number,
  lengthMs: number,
  stepMs: number,
): Promise<WindowSummary> {
  const a = await windowAgg(db, machineId, asOfMs, lengthMs);
  return {
    efficiency: windowFigure({ n: a.n, mean: a.eff, std: a.s_eff, meanU: a.u_eff }, lengthMs, stepMs),
    drift: windowFigure({ n: a.nd, mean: a.drift, std: a.s_drift, meanU: a.u_drift }, lengthMs, stepMs),
    baselineEfficiency: a.base,
    operatingPoint: a.x,
  };
}

/** Daily means of drift [%-points] over usable results in [fromMs, toMs), day mid-points [ms] (UTC days). */
export async function dailyDriftMeans(
  db: Queryable,
  machineId: number,
  fromMs: number,
  toMs: number,
  minPoints: number,
): Promise<{ t: number[]; driftPts: number[]; n: number[] }> {
  const res = await db.query<{ day: number; drift: number; n: number }>(
    `SELECT (extract(epoch FROM date_trunc('day', time, 'UTC')) * 1000)::float8 AS day, avg(drift) AS drift, count(drift)::int AS n
       FROM results
      WHERE machine_id = $1 AND time >= to_timestamp($2::float8 / 1000) AND time < to_timestamp($3::float8 / 1000)
        AND drift IS NOT NULL AND ${USABLE_RESULT_SQL}
      GROUP BY 1 HAVING count(drift) >= $4 ORDER BY 1`,
    [machineId, fromMs, toMs, minPoints],
  );
  return {
    t: res.rows.map((r) => r.day + DAY_MS / 2),
    driftPts: res.rows.map((r) => r.drift),
    n: res.rows.map((r) => r.n),
  };
}

const date = (ms: number | undefined): Date | null =>
  ms !== undefined && Number.isFinite(ms) ? new Date(ms) : null;

/** The seven machine_status columns of one window, in their order. */
const windowColumns = (w: WindowSummary | undefined): unknown[] => [
  w?.efficiency.n ?? 0,
  finiteOrNull(w?.efficiency.coverage),
  finiteOrNull(w?.efficiency.mean),
  finiteOrNull(w?.efficiency.u),
  finiteOrNull(w?.baselineEfficiency),
  finiteOrNull(w?.drift.mean),
  finiteOrNull(w?.drift.u),
];

async function writeStatus(
  db: Queryable,
  m: MachineDb,
  baseline: StoredBaseline | undefined,
  o: Required<Omit<AnalysisOptions, 'machineIds'>>,
): Promise<boolean> {
  const newest = await db.query<{ t: number | null }>(
    `SELECT (extract(epoch FROM max(time)) * 1000)::float8 AS t FROM results WHERE machine_id = $1`,
    [m.id],
  );
  const last = newest.rows[0]?.t ?? null;
  if (last === null) return false;
  const asOf = last + o.stepMs;
  const [w1, w24, w7] = await Promise.all(
    [3_600_000, DAY_MS, 7 * DAY_MS].map((len) => windowSummary(db, m.id, asOf, len, o.stepMs)),
  );
  const bands = await bandsFor(db, m.id, m.kind);
  const alarmPts = -bands.alarm;
  const days = await dailyDriftMeans(db, m.id, asOf - o.rateWindowDays * DAY_MS, asOf, o.minPointsPerDay);
  const deg = degradation(days.t, days.driftPts, { alarmPts });
  const f = deg.forecast;
  await db.query(
    `INSERT INTO machine_status (machine_id, as_of, updated_at, baseline_id,
        n_1h, coverage_1h, efficiency_1h, u_efficiency_1h, baseline_efficiency_1h, drift_1h, u_drift_1h,
        n_24h, coverage_24h, efficiency_24h, u_efficiency_24h, baseline_efficiency_24h, drift_24h, u_drift_24h,
        n_7d, coverage_7d, efficiency_7d, u_efficiency_7d, baseline_efficiency_7d, drift_7d, u_drift_7d,
        operating_point_1h, rate_window_days, rate_days, rate_pts_per_month, rate_low_pts_per_month, rate_high_pts_per_month,
        rate_confidence, alarm_pts, forecast_status, forecast_at, forecast_earliest, forecast_latest, forecast_text, caution)
     VALUES ($1, to_timestamp($2::float8 / 1000), now(), $3,
        $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, $14, $15, $16, $17, $18, $19, $20, $21, $22, $23, $24,
        $25, $26, $27, $28, $29, $30, $31, $32, $33, $34, $35, $36, $37, $38)
     ON CONFLICT (machine_id) DO UPDATE SET as_of = EXCLUDED.as_of, updated_at = now(), baseline_id = EXCLUDED.baseline_id,
        n_1h = EXCLUDED.n_1h, coverage_1h = EXCLUDED.coverage_1h, efficiency_1h = EXCLUDED.efficiency_1h,
        u_efficiency_1h = EXCLUDED.u_efficiency_1h, baseline_efficiency_1h = EXCLUDED.baseline_efficiency_1h,
        drift_1h = EXCLUDED.drift_1h, u_drift_1h = EXCLUDED.u_drift_1h,
        n_24h = EXCLUDED.n_24h, coverage_24h = EXCLUDED.coverage_24h, efficiency_24h = EXCLUDED.efficiency_24h,
        u_efficiency_24h = EXCLUDED.u_efficiency_24h, baseline_efficiency_24h = EXCLUDED.baseline_efficiency_24h,
        drift_24h = EXCLUDED.drift_24h, u_drift_24h = EXCLUDED.u_drift_24h,
        n_7d = EXCLUDED.n_7d, coverage_7d = EXCLUDED.coverage_7d, efficiency_7d = EXCLUDED.efficiency_7d,
        u_efficiency_7d = EXCLUDED.u_efficiency_7d, baseline_efficiency_7d = EXCLUDED.baseline_efficiency_7d,
        drift_7d = EXCLUDED.drift_7d, u_drift_7d = EXCLUDED.u_drift_7d,
        operating_point_1h = EXCLUDED.operating_point_1h, rate_window_days = EXCLUDED.rate_window_days,
        rate_days = EXCLUDED.rate_days, rate_pts_per_month = EXCLUDED.rate_pts_per_month,
        rate_low_pts_per_month = EXCLUDED.rate_low_pts_per_month, rate_high_pts_per_month = EXCLUDED.rate_high_pts_per_month,
        rate_confidence = EXCLUDED.rate_confidence, alarm_pts = EXCLUDED.alarm_pts, forecast_status = EXCLUDED.forecast_status,
        forecast_at = EXCLUDED.forecast_at, forecast_earliest = EXCLUDED.forecast_earliest,
        forecast_latest = EXCLUDED.forecast_latest, forecast_text = EXCLUDED.forecast_text, caution = EXCLUDED.caution`,
    [
      m.id,
      asOf,
      baseline?.id ?? null,
      ...windowColumns(w1),
      ...windowColumns(w24),
      ...windowColumns(w7),
      finiteOrNull(w1?.operatingPoint),
      o.rateWindowDays,
      deg.n,
      finiteOrNull(deg.ratePtsPerMonth),
      finiteOrNull(deg.rateLowPtsPerMonth),
      finiteOrNull(deg.rateHighPtsPerMonth),
      deg.confidence,
      alarmPts,
      f.status,
      date(f.status === 'none' ? undefined : f.atMs),
      date(f.status === 'forecast' ? f.earliestMs : undefined),
      date(f.status === 'forecast' ? f.latestMs : undefined),
      f.status === 'none' ? f.text : f.status === 'reached' ? f.reason : null,
      CAUTION,
    ],
  );
  return true;
}

function resolve(options: AnalysisOptions): Required<Omit<AnalysisOptions, 'machineIds'>> {
  return {
    stepMs: options.stepMs ?? 60_000,
    batchRows: options.batchRows ?? 10_000,
    maxBatches: options.maxBatches ?? 10,
    rateWindowDays: options.rateWindowDays ?? 90,
    minPointsPerDay: options.minPointsPerDay ?? 60,
  };
}

/** Analyse one machine: baseline, drift series, status. */
export async function analyseMachine(
  pool: pg.Pool,
  m: MachineDb,
  nowMs: number,
  options: AnalysisOptions = {},
): Promise<MachineAnalysis> {
  const o = resolve(options);
  let baseline = await readActiveBaseline(pool, m.id);
  let fit = 'active';
  if (baseline === undefined) {
    const outcome = await fitBaselineFromSpec(pool, m.id, m.baseline_spec, nowMs);
    fit = outcome.status === 'failed' ? `failed: ${outcome.code}` : outcome.status;
    baseline = outcome.status === 'fitted' ? outcome.baseline : await readActiveBaseline(pool, m.id);
  }
  // A baseline other than the one the series was last written with: every row is pending again,
  // and their span is queued.
  if (baseline !== undefined && m.status_baseline_id !== baseline.id)
    await pool.query(
      `WITH reset AS (
         UPDATE results SET analyzed_at = NULL
          WHERE machine_id = $1 AND baseline_id IS DISTINCT FROM $2 AND analyzed_at IS NOT NULL
          RETURNING time)
       INSERT INTO analysis_pending (machine_id, from_time, to_time)
       SELECT $1, min(time), max(time) + interval '1 millisecond' FROM reset HAVING count(*) > 0`,
      [m.id, baseline.id],
    );
  const rows = await writeDrift(pool, m.id, baseline, o.batchRows, o.maxBatches);
  const written = await writeStatus(pool, m, baseline, o);
  return {
    machineId: m.id,
    baselineId: baseline?.id ?? null,
    baseline: fit,
    driftRows: rows,
    status: written ? 'written' : 'no-results',
  };
}

/** One analysis pass over every machine (or the given ones). */
export async function runAnalysisOnce(
  pool: pg.Pool,
  options: AnalysisOptions & { readonly nowMs: number },
): Promise<MachineAnalysis[]> {
  const out: MachineAnalysis[] = [];
  for (const m of await machinesToAnalyse(pool, options.machineIds))
    out.push(await analyseMachine(pool, m, options.nowMs, options));
  return out;
}

/**
 * Analysis after a backfill: first the gauge/absolute step over all results up to nowMs (as the
 * alerts tick runs it before the analysis, services/jobs/src/instrument), then the whole drift
 * series of the machines, however long.
 */
export async function backfillAnalysis(
  pool: pg.Pool,
  options: AnalysisOptions & { readonly nowMs: number },
): Promise<MachineAnalysis[]> {
  await runGaugeAbsoluteOnce(pool, {
    nowMs: options.nowMs,
    windowMs: Number.POSITIVE_INFINITY,
    ...(options.machineIds === undefined ? {} : { machineIds: options.machineIds }),
    ...(options.stepMs === undefined ? {} : { stepMs: options.stepMs }),
  });
  return runAnalysisOnce(pool, { ...options, maxBatches: Number.POSITIVE_INFINITY });
}
