/**
 * Monthly degradation export: on the 1st at 02:00 site time (scheduler), the report of every
 * complete calendar month (UTC, as the report builder defines months) not yet exported is built
 * with buildMonthlyReport (packages/monitor/src/report) from the stored results and the drift
 * series of the analysis job, rendered as CSV, JSON and printable HTML, and stored in `exports`
 * (kind 'monthly-degradation', created_by 'system', SHA-256 checksum). A missed run catches up.
 */
import { createHash } from 'node:crypto';
import type pg from 'pg';
// The monitor package's entry does not re-export the report module yet; reached by path, as the API does.
import {
  buildMonthlyReport,
  type MonthlyMachineInput,
  type MonthlyReportInput,
  monthRange,
  previousMonth,
  renderReportCsv,
  renderReportHtml,
  renderReportJson,
} from '../../../../packages/monitor/src/report/index.js';
import { bandsFor } from '../alerts/config.js';
import { dailyDriftMeans } from '../analysis/job.js';
import type { Queryable } from '../queries/machines.js';

export const MONTHLY_EXPORT_KIND = 'monthly-degradation';
const FORMATS = ['csv', 'json', 'html'] as const;

export interface MonthlyOptions {
  readonly nowMs: number;
  /** Energy price for the cost column. */
  readonly price?: { readonly perMWh: number; readonly currency: string } | undefined;
  /** Days of daily drift the rate rests on; default 90. */
  readonly rateWindowDays?: number;
  /** Fewest points for a day to count; default 60. */
  readonly minPointsPerDay?: number;
  /** Months to look back for one not yet exported; default 3. */
  readonly lookBackMonths?: number;
}

/** 'YYYY-MM' of a time [ms], UTC. */
export function monthOf(ms: number): string {
  const d = new Date(ms);
  return `${d.getUTCFullYear()}-${String(d.getUTCMonth() + 1).padStart(2, '0')}`;
}

interface MonthRows {
  t: number[];
  efficiency: number[];
  baseline: number[];
  power: number[];
  total: number;
  meanEfficiency: number | null;
  meanDrift: number | null;
}

async function monthRows(db: Queryable, machineId: number, fromMs: number, toMs: number): Promise<MonthRows> {
  const res = await db.query<{
    t: number;
    efficiency: number | null;
    baseline_efficiency: number | null;
    power: number | null;
    drift: number | null;
    valid: boolean;
  }>(
    `SELECT (extract(epoch FROM time) * 1000)::float8 AS t, efficiency, baseline_efficiency, power, drift, valid
       FROM results WHERE machine_id = $1 AND time >= to_timestamp($2::float8 / 1000) AND time < to_timestamp($3::float8 / 1000)
      ORDER BY time`,
    [machineId, fromMs, toMs],
  );
  const out: MonthRows = {
    t: [],
    efficiency: [],
    baseline: [],
    power: [],
    total: res.rows.length,
    meanEfficiency: null,
    meanDrift: null,
  };
  let se = 0;
  let ne = 0;
  let sd = 0;
  let nd = 0;
  for (const r of res.rows) {
    if (!r.valid) continue;
    out.t.push(r.t);
    out.efficiency.push(r.efficiency ?? Number.NaN);
    out.baseline.push(r.baseline_efficiency ?? Number.NaN);
    out.power.push(r.power ?? Number.NaN);
    if (r.efficiency !== null) {
      se += r.efficiency;
      ne++;
    }
    if (r.drift !== null) {
      sd += r.drift;
      nd++;
    }
  }
  out.meanEfficiency = ne > 0 ? se / ne : null;
  out.meanDrift = nd > 0 ? sd / nd : null;
  return out;
}

/** The report input of a month from the results and their drift series. */
export async function gatherMonth(
  pool: pg.Pool,
  month: string,
  options: Omit<MonthlyOptions, 'lookBackMonths'>,
): Promise<MonthlyReportInput> {
  const { fromMs, toMs } = monthRange(month);
  const prev = monthRange(previousMonth(month));
  const windowDays = options.rateWindowDays ?? 90;
  const machines = await pool.query<{
    id: number;
    site: string;
    slug: string;
    name: string;
    kind: MonthlyMachineInput['kind'];
  }>(
    `SELECT m.id, s.slug AS site, m.slug, m.name, m.kind FROM machines m JOIN sites s ON s.id = m.site_id
      WHERE m.retired_at IS NULL OR m.retired_at > to_timestamp($1::float8 / 1000)
      ORDER BY s.slug, m.slug`,
    [fromMs],
  );
  const out: MonthlyMachineInput[] = [];
  for (const m of machines.rows) {
    const cur = await monthRows(pool, m.id, fromMs, toMs);
    const before = await monthRows(pool, m.id, prev.fromMs, prev.toMs);
    const days = await dailyDriftMeans(
      pool,
      m.id,
      toMs - windowDays * 86_400_000,
      toMs,
      options.minPointsPerDay ?? 60,
    );
    const bands = await bandsFor(pool, m.id, m.kind);
    out.push({
      machineId: m.id,
      site: m.site,
      slug: m.slug,
      name: m.name,
      kind: m.kind,
      results: { t: cur.t, efficiency: cur.efficiency, baseline: cur.baseline, power: cur.power },
      resultsTotal: cur.total,
      dailyDrift: { t: days.t, driftPts: days.driftPts },
      alarmPts: -bands.alarm,
      previous: { meanEfficiency: before.meanEfficiency, driftPts: before.meanDrift },
    });
  }
  return {
    month,
    generatedAtMs: options.nowMs,
    machines: out,
    price: options.price,
    rateWindowDays: windowDays,
  };
}

export interface MonthlyRunStats {
  readonly months: readonly string[];
  readonly exports: number;
}

/** Export every complete month (within the look-back) that has no system export yet. */
export async function runMonthlyExport(pool: pg.Pool, options: MonthlyOptions): Promise<MonthlyRunStats> {
  const months: string[] = [];
  let month = previousMonth(monthOf(options.nowMs));
  for (let k = 0; k < (options.lookBackMonths ?? 3); k++) {
    months.unshift(month);
    month = previousMonth(month);
  }
  const done: string[] = [];
  let written = 0;
  for (const mo of months) {
    const { fromMs, toMs } = monthRange(mo);
    if (toMs > options.nowMs) continue;
    const have = await pool.query<{ format: string }>(
      `SELECT format FROM exports WHERE kind = $1 AND machine_id IS NULL AND created_by = 'system' AND status = 'done'
          AND period_from = to_timestamp($2::float8 / 1000) AND period_to = to_timestamp($3::float8 / 1000)`,
      [MONTHLY_EXPORT_KIND, fromMs, toMs],
    );
    const missing = FORMATS.filter((f) => !have.rows.some((r) => r.format === f));
    if (missing.length === 0) continue;
    const report = buildMonthlyReport(await gatherMonth(pool, mo, options));
    for (const format of missing) {
      const text =
        format === 'csv'
          ? renderReportCsv(report)
          : format === 'json'
            ? renderReportJson(report)
            : renderReportHtml(report);
      const content = Buffer.from(text, 'utf8');
      await pool.query(
        `INSERT INTO exports (kind, machine_id, period_from, period_to, format, status, content, checksum, created_by, created_at, finished_at)
         VALUES ($1, NULL, to_timestamp($2::float8 / 1000), to_timestamp($3::float8 / 1000), $4, 'done', $5, $6, 'system',
                 to_timestamp($7::float8 / 1000), to_timestamp($7::float8 / 1000))`,
        [
          MONTHLY_EXPORT_KIND,
          fromMs,
          toMs,
          format,
          content,
          createHash('sha256').update(content).digest('hex'),
          options.nowMs,
        ],
      );
      written++;
    }
    done.push(mo);
  }
  return { months: done, exports: written };
}
