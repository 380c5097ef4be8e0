/**
 * Reads the stored figures a monthly degradation report rests on: the results of a span with the
 * baseline efficiency and drift the analysis job wrote onto each row (migrations/0004), daily
 * drift means over given day bounds, the machines with their sites' zones, and the alarm level
 * the analysis job stored in machine_status. Nothing is derived here: the figures are read as the
 * analysis job left them. The report input is put together by packages/monitor gatherMonth, from
 * `monthlyFigures(db)`.
 */
import type { Queryable } from './errors.js';

/**
 * Results that a baseline fit, a rolling window or a daily drift mean may use: steady, valid, with
 * an efficiency and no instrument fault flag.
 */
export const USABLE_RESULT_SQL = `steady AND valid AND efficiency IS NOT NULL
  AND NOT EXISTS (SELECT 1 FROM unnest(flags) AS f(flag) WHERE f.flag LIKE 'fault:%')`;

export interface MonthlyMachineRow {
  readonly id: number;
  readonly site: string;
  readonly slug: string;
  readonly name: string;
  readonly kind: 'turbine' | 'compressor' | 'pump' | 'fan';
  readonly timeZone: string;
  /** [ms], null while in service. */
  readonly retiredMs: number | null;
}

/** The valid results of a span (time order) and its means; total counts every stored row. */
export interface SpanResults {
  /** [ms] */
  readonly t: number[];
  /** [-], NaN where absent. */
  readonly efficiency: number[];
  /** Stored baseline efficiency at each row's operating point [-], NaN where absent. */
  readonly baseline: number[];
  /** [W], NaN where absent. */
  readonly power: number[];
  readonly total: number;
  readonly meanEfficiency: number | null;
  /** Mean of the stored drift over the valid rows [%-points]. */
  readonly meanDrift: number | null;
}

/** Machines with their site and its zone, by site slug and machine slug. */
export async function readMonthlyMachines(db: Queryable): Promise<MonthlyMachineRow[]> {
  const res = await db.query<MonthlyMachineRow>(
    `SELECT m.id, s.slug AS site, m.slug, m.name, m.kind, s.time_zone AS "timeZone",
            (extract(epoch FROM m.retired_at) * 1000)::float8 AS "retiredMs"
       FROM machines m JOIN sites s ON s.id = m.site_id
      ORDER BY s.slug, m.slug`,
  );
  return res.rows;
}

interface SpanRow {
  t: number;
  efficiency: number | null;
  baseline_efficiency: number | null;
  power: number | null;
  drift: number | null;
  valid: boolean;
}

/** Stored results of a machine in [fromMs, toMs). */
export async function readSpanResults(
  db: Queryable,
  machineId: number,
  fromMs: number,
  toMs: number,
): Promise<SpanResults> {
  const res = await db.query<SpanRow>(
    `SELECT (extract(epoch FROM time) * 1000)::float8 AS t, efficiency, baseline_efficiency, power, drift, valid
       FROM results WHERE machine_id = $1 AND time >= to_timestamp($2::float8 / 1000) AND time < to_timestamp($3::float8 / 1000)
      ORDER BY time`,
    [machineId, fromMs, toMs],
  );
  const valid = res.rows.filter((r) => r.valid);
  const mean = (v: (number | null)[]): number | null => {
    const f = v.filter((x): x is number => x !== null);
    return f.length > 0 ? f.reduce((a, b) => a + b, 0) / f.length : null;
  };
  return {
    t: valid.map((r) => r.t),
    efficiency: valid.map((r) => r.efficiency ?? Number.NaN),
    baseline: valid.map((r) => r.baseline_efficiency ?? Number.NaN),
    power: valid.map((r) => r.power ?? Number.NaN),
    total: res.rows.length,
    meanEfficiency: mean(valid.map((r) => r.efficiency)),
    meanDrift: mean(valid.map((r) => r.drift)),
  };
}

/**
 * Means of the stored drift [%-points] over usable results per day, for the days given by their
 * bounds [ms] (consecutive, as packages/monitor localDays gives them), keeping days with at least
 * minPoints; t is the day's mid-point [ms]. The database only sorts rows into the given bounds
 * (width_bucket), whatever its own time-zone data says.
 */
export async function readDailyDriftMeans(
  db: Queryable,
  machineId: number,
  days: readonly { readonly fromMs: number; readonly toMs: number }[],
  minPoints: number,
): Promise<{ t: number[]; driftPts: number[]; n: number[] }> {
  const first = days[0];
  if (first === undefined) return { t: [], driftPts: [], n: [] };
  const bounds = [first.fromMs, ...days.map((d) => d.toMs)].map((ms) => new Date(ms).toISOString());
  const res = await db.query<{ k: number; drift: number; n: number }>(
    `SELECT width_bucket(time, $2::timestamptz[]) AS k, avg(drift) AS drift, count(drift)::int AS n
       FROM results
      WHERE machine_id = $1 AND time >= $3::timestamptz AND time < $4::timestamptz
        AND drift IS NOT NULL AND ${USABLE_RESULT_SQL}
      GROUP BY 1 HAVING count(drift) >= $5 ORDER BY 1`,
    [machineId, bounds, bounds[0], bounds.at(-1), minPoints],
  );
  const out = { t: [] as number[], driftPts: [] as number[], n: [] as number[] };
  for (const r of res.rows) {
    // Bucket k (1-based) holds [bounds[k-1], bounds[k]), day k-1.
    const day = days[r.k - 1];
    if (day === undefined) continue;
    out.t.push((day.fromMs + day.toMs) / 2);
    out.driftPts.push(r.drift);
    out.n.push(r.n);
  }
  return out;
}

/** The drift alarm level the analysis job stored for the machine [%-points, negative], if any. */
export async function readStoredAlarmPts(db: Queryable, machineId: number): Promise<number | undefined> {
  const res = await db.query<{ alarm_pts: number | null }>(
    `SELECT alarm_pts FROM machine_status WHERE machine_id = $1`,
    [machineId],
  );
  return res.rows[0]?.alarm_pts ?? undefined;
}

/** The readers above bound to one connection, as packages/monitor gatherMonth takes them. */
export function monthlyFigures(db: Queryable) {
  return {
    machines: () => readMonthlyMachines(db),
    spanResults: (machineId: number, fromMs: number, toMs: number) =>
      readSpanResults(db, machineId, fromMs, toMs),
    dailyDriftMeans: (
      machineId: number,
      days: readonly { readonly fromMs: number; readonly toMs: number }[],
      minPoints: number,
    ) => readDailyDriftMeans(db, machineId, days, minPoints),
    alarmPts: (machineId: number) => readStoredAlarmPts(db, machineId),
  };
}
