/**
 * Gathers the input of the monthly degradation report (packages/monitor/src/report) from the
 * database: per machine the valid results of the month with the active baseline evaluated at each
 * result's operating point, the daily drift over the rate window ending at the month's end, the
 * alarm band and the previous month's means. Used by the exports endpoint and by the monthly job.
 */

import { type MonthlyReportInput, monthRange, previousMonth } from '@isentrope/monitor';
import type pg from 'pg';
import { activeBaseline, baselineAt } from './baselines.js';
import { getBands, listMachines } from './machines.js';
import { withoutJit } from './nojit.js';
import { dailyDrift } from './results.js';

export interface GatherMonthlyOptions {
  /** Only these machines (ids); default every machine not retired before the month. */
  readonly machineIds?: readonly number[] | undefined;
  readonly price?: { readonly perMWh: number; readonly currency: string } | undefined;
  /** Days of daily drift for the rate, ending at the month's end; default 90. */
  readonly rateWindowDays?: number | undefined;
  /** Time one result stands for [ms]; default the median spacing of the month's results. */
  readonly intervalMs?: number | undefined;
  readonly generatedAtMs?: number | undefined;
}

type Queryable = Pick<pg.Pool, 'query'>;

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

/** The report input for `month` ('YYYY-MM', UTC). */
export async function gatherMonthlyInput(
  pool: pg.Pool,
  month: string,
  options: GatherMonthlyOptions = {},
): Promise<MonthlyReportInput> {
  const { fromMs, toMs } = monthRange(month);
  const prev = monthRange(previousMonth(month));
  const windowDays = options.rateWindowDays ?? 90;
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
        : await withoutJit(pool, (c) => dailyDrift(c, m.id, toMs - windowDays * 86_400_000, toMs, baseline));
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
    generatedAtMs: options.generatedAtMs ?? Date.now(),
    machines: out,
    price: options.price,
    rateWindowDays: windowDays,
  };
}
