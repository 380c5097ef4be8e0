/**
 * Gathers the input of the monthly degradation report (packages/monitor/src/report) from the
 * database: per machine the valid results of the month with the active baseline evaluated at each
 * result's operating point, the daily drift over the rate window ending at the month's end, the
 * alarm band and the previous month's means. Used by the exports endpoint (the monthly job in
 * services/jobs gathers its own from the drift the analysis job stored).
 *
 * The month and its days are local calendar time in options.timeZone (the site's zone, chosen by
 * the route): local midnight to local midnight, so 23 or 25 hours on the days the clocks change.
 * The day bounds come from the pure calendar (packages/monitor localDays); the database only sorts
 * results into them (width_bucket), whatever its own time-zone data says.
 */

import {
  addDays,
  addMonths,
  type LocalDay,
  localDays,
  localMonth,
  type MonthlyReportInput,
  previousMonth,
} from '@isentrope/monitor';
import type pg from 'pg';
import { activeBaseline, type BaselineRow, baselineAt, sqlCoefficients } from './baselines.js';
import { getBands, listMachines } from './machines.js';
import { withoutJit } from './nojit.js';
import type { DailyDrift } from './results.js';

export interface GatherMonthlyOptions {
  /** IANA zone the month and its days are cut in (the site's). */
  readonly timeZone: string;
  /** Only these machines (ids); default every machine not retired before the month. */
  readonly machineIds?: readonly number[] | undefined;
  readonly price?: { readonly perMWh: number; readonly currency: string } | undefined;
  /** Local days of daily drift for the rate, ending with the month; default 90. */
  readonly rateWindowDays?: number | undefined;
  /** Time one result stands for [ms]; default the median spacing of the month's results. */
  readonly intervalMs?: number | undefined;
  readonly generatedAtMs?: number | undefined;
}

type Queryable = Pick<pg.Pool, 'query'>;

/** Daily means of the drift (valid results against the baseline) on the given local days; t = day mid-point. */
async function localDailyDrift(
  db: Queryable,
  machineId: number,
  days: readonly LocalDay[],
  baseline: BaselineRow,
): Promise<DailyDrift[]> {
  const c = sqlCoefficients(baseline);
  const first = days[0];
  if (c === undefined || first === undefined) return [];
  const bounds = [first.fromMs, ...days.map((d) => d.toMs)].map((ms) => new Date(ms).toISOString());
  const { rows } = await db.query<{ k: number; drift: number; n: number }>(
    `SELECT width_bucket(time, $2::timestamptz[]) AS k,
            100 * avg(efficiency - ($5::float8 + $6::float8 * operating_point + $7::float8 * operating_point ^ 2 + $8::float8 * operating_point ^ 3)) AS drift,
            count(*)::int AS n
       FROM results
      WHERE machine_id = $1 AND time >= $3::timestamptz AND time < $4::timestamptz
        AND valid AND efficiency IS NOT NULL AND operating_point IS NOT NULL
      GROUP BY 1 ORDER BY 1`,
    [machineId, bounds, bounds[0], bounds.at(-1), ...c],
  );
  const out: DailyDrift[] = [];
  for (const r of rows) {
    const day = days[r.k - 1]; // bucket k (1-based) is [bounds[k-1], bounds[k])
    if (day !== undefined) out.push({ t: (day.fromMs + day.toMs) / 2, driftPts: r.drift, n: r.n });
  }
  return out;
}

async function monthMeans(
  db: Queryable,
  machineId: number,
  fromMs: number,
  toMs: number,
  baseline: Awaited<ReturnType<typeof activeBaseline>>,
): Promise<{ t: number[]; efficiency: number[]; baseline: number[]; power: number[]; total: number }> {
  const { rows } = await db.query<{
    time: Date;
    efficiency: number | null;
    operating_point: number | null;
    power: number | null;
    valid: boolean;
  }>(
    `SELECT time, efficiency, operating_point, power, valid FROM results
      WHERE machine_id = $1 AND time >= $2 AND time < $3 ORDER BY time`,
    [machineId, new Date(fromMs), new Date(toMs)],
  );
  const out = {
    t: [] as number[],
    efficiency: [] as number[],
    baseline: [] as number[],
    power: [] as number[],
    total: rows.length,
  };
  for (const r of rows) {
    if (!r.valid) continue;
    out.t.push(r.time.getTime());
    out.efficiency.push(r.efficiency ?? Number.NaN);
    out.baseline.push(
      baseline !== undefined && r.operating_point !== null
        ? baselineAt(baseline, r.operating_point).efficiency
        : Number.NaN,
    );
    out.power.push(r.power ?? Number.NaN);
  }
  return out;
}

function mean(values: readonly number[]): number | null {
  let s = 0;
  let n = 0;
  for (const v of values)
    if (Number.isFinite(v)) {
      s += v;
      n++;
    }
  return n > 0 ? s / n : null;
}

/** The report input for `month` ('YYYY-MM' in options.timeZone). */
export async function gatherMonthlyInput(
  pool: pg.Pool,
  month: string,
  options: GatherMonthlyOptions,
): Promise<MonthlyReportInput> {
  const { timeZone } = options;
  const { fromMs, toMs } = localMonth(month, timeZone);
  const prev = localMonth(previousMonth(month), timeZone);
  const windowDays = options.rateWindowDays ?? 90;
  const rateDays = localDays(timeZone, addDays(`${addMonths(month, 1)}-01`, -windowDays), windowDays);
  const machines = (await listMachines(pool)).filter(
    (m) =>
      (options.machineIds === undefined || options.machineIds.includes(m.id)) &&
      (m.retired_at === null || m.retired_at.getTime() > fromMs),
  );
  const out: MonthlyReportInput['machines'][number][] = [];
  for (const m of machines) {
    const baseline = await activeBaseline(pool, m.id);
    const bands = await getBands(pool, m.id);
    const results = await monthMeans(pool, m.id, fromMs, toMs, baseline);
    const previous = await monthMeans(pool, m.id, prev.fromMs, prev.toMs, baseline);
    const days =
      baseline === undefined
        ? []
        : await withoutJit(pool, (c) => localDailyDrift(c, m.id, rateDays, baseline));
    const prevEff = mean(previous.efficiency);
    const prevDrift = mean(
      previous.efficiency.map((e, i) => 100 * (e - (previous.baseline[i] ?? Number.NaN))),
    );
    out.push({
      machineId: m.id,
      site: m.site_slug,
      slug: m.slug,
      name: m.name,
      kind: m.kind,
      results: {
        t: results.t,
        efficiency: results.efficiency,
        baseline: results.baseline,
        power: results.power,
      },
      resultsTotal: results.total,
      intervalMs: options.intervalMs,
      dailyDrift: { t: days.map((d) => d.t), driftPts: days.map((d) => d.driftPts) },
      alarmPts: bands === undefined ? undefined : -bands.alarm,
      previous: { meanEfficiency: prevEff, driftPts: prevDrift },
    });
  }
  return {
    month,
    timeZone,
    generatedAtMs: options.generatedAtMs ?? Date.now(),
    machines: out,
    price: options.price,
    rateWindowDays: windowDays,
  };
}
