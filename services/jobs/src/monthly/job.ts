/**
 * Monthly degradation export. Each hourly tick (scheduler) exports every month that has ended in
 * a site's time zone at least settleMs ago (default 2 h, the settle time the 02:00-on-the-1st
 * schedule used to give) and has no system export yet, within the look-back. A month runs from
 * local midnight on the 1st to local midnight on the next 1st in the site's zone, and its daily
 * drift means are local days (23 or 25 hours when the clocks change); see
 * packages/monitor/src/local-calendar.ts. Sites whose zones give the month the same bounds share
 * one export (due.ts). The report is built with buildMonthlyReport from the stored results and the
 * drift series of the analysis job, rendered as CSV, JSON and printable HTML, and stored in
 * `exports` (kind 'monthly-degradation', created_by 'system', SHA-256 checksum), keyed by its
 * period. A missed run catches up.
 *
 * Exports made before months followed the site zone cover UTC months (their HTML says "(UTC)",
 * their JSON bounds end in 'Z'; their CSV states no period). They are kept as they were: for a UTC
 * site they are the month's export; for a site in another zone their period differs, so the months
 * of the look-back get a site-time export beside them, and older months keep only the UTC one.
 */
import { createHash } from 'node:crypto';
import {
  addDays,
  addMonths,
  buildMonthlyReport,
  localDays,
  localMonth,
  type MonthlyMachineInput,
  type MonthlyReportInput,
  previousMonth,
  renderReportCsv,
  renderReportHtml,
  renderReportJson,
  sharedMonthZone,
} from '@isentrope/monitor';
import type { Queryable } from '@isentrope/store';
import type pg from 'pg';
import { bandsFor } from '../alerts/config.js';
import { JobsError } from '../errors.js';
import { localDailyDriftMeans } from './days.js';
import { dueMonths } from './due.js';

export const MONTHLY_EXPORT_KIND = 'monthly-degradation';
const FORMATS = ['csv', 'json', 'html'] as const;
const HOUR_MS = 3_600_000;

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
  /** Time after a month's end in the site's zone before it is exported [ms]; default 2 h. */
  readonly settleMs?: number;
}

export interface GatherMonthOptions extends Omit<MonthlyOptions, 'lookBackMonths' | 'settleMs'> {
  /** Zone the month and its days are cut in; default the zone of the machines' sites. */
  readonly timeZone?: string;
  /** Only machines of sites in these zones; default every site. */
  readonly siteTimeZones?: readonly string[];
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

/** The report input of a month, in a site time zone, from the results and their drift series. */
export async function gatherMonth(
  pool: pg.Pool,
  month: string,
  options: GatherMonthOptions,
): Promise<MonthlyReportInput> {
  const rows = await pool.query<{
    id: number;
    site: string;
    slug: string;
    name: string;
    kind: MonthlyMachineInput['kind'];
    time_zone: string;
    retired_ms: number | null;
  }>(
    `SELECT m.id, s.slug AS site, m.slug, m.name, m.kind, s.time_zone,
            (extract(epoch FROM m.retired_at) * 1000)::float8 AS retired_ms
       FROM machines m JOIN sites s ON s.id = m.site_id
      ORDER BY s.slug, m.slug`,
  );
  const sites = options.siteTimeZones;
  const selected = rows.rows.filter((m) => sites === undefined || sites.includes(m.time_zone));
  const zones = selected.map((m) => m.time_zone);
  const timeZone = options.timeZone ?? sharedMonthZone(month, zones);
  if (timeZone === undefined)
    throw new JobsError(
      'JOBS_BAD_CONFIG',
      `the machines are at sites in time zones whose month ${month} differs (${[...new Set(zones)].join(', ')}); name the report's timeZone and siteTimeZones`,
      { month, timeZones: [...new Set(zones)] },
    );
  const { fromMs, toMs } = localMonth(month, timeZone);
  const prev = localMonth(previousMonth(month), timeZone);
  const windowDays = options.rateWindowDays ?? 90;
  // The rate window: the windowDays local days that end with the month.
  const rateDays = localDays(timeZone, addDays(`${addMonths(month, 1)}-01`, -windowDays), windowDays);
  const out: MonthlyMachineInput[] = [];
  for (const m of selected) {
    if (m.retired_ms !== null && m.retired_ms <= fromMs) continue;
    const cur = await monthRows(pool, m.id, fromMs, toMs);
    const before = await monthRows(pool, m.id, prev.fromMs, prev.toMs);
    const days = await localDailyDriftMeans(pool, m.id, rateDays, options.minPointsPerDay ?? 60);
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
    timeZone,
    generatedAtMs: options.nowMs,
    machines: out,
    price: options.price,
    rateWindowDays: windowDays,
  };
}

export interface MonthlyRunStats {
  /** Months exported in this run, 'YYYY-MM' (once per zone group). */
  readonly months: readonly string[];
  /** The same with their zone and bounds (ISO 8601 with UTC offsets). */
  readonly periods: readonly { month: string; timeZone: string; from: string; to: string }[];
  readonly exports: number;
}

/** Export every month that has ended in a site's zone (within the look-back) and has no system export yet. */
export async function runMonthlyExport(pool: pg.Pool, options: MonthlyOptions): Promise<MonthlyRunStats> {
  const zones = await pool.query<{ time_zone: string }>(
    `SELECT DISTINCT s.time_zone FROM sites s WHERE EXISTS (SELECT 1 FROM machines m WHERE m.site_id = s.id)`,
  );
  const due = dueMonths(
    options.nowMs,
    zones.rows.map((r) => r.time_zone),
    options.lookBackMonths ?? 3,
    options.settleMs ?? 2 * HOUR_MS,
  );
  const months: string[] = [];
  const periods: { month: string; timeZone: string; from: string; to: string }[] = [];
  let written = 0;
  for (const { month, timeZones, period } of due) {
    const { fromMs, toMs } = period;
    const have = await pool.query<{ format: string }>(
      `SELECT format FROM exports WHERE kind = $1 AND machine_id IS NULL AND created_by = 'system' AND status = 'done'
          AND period_from = to_timestamp($2::float8 / 1000) AND period_to = to_timestamp($3::float8 / 1000)`,
      [MONTHLY_EXPORT_KIND, fromMs, toMs],
    );
    const missing = FORMATS.filter((f) => !have.rows.some((r) => r.format === f));
    if (missing.length === 0) continue;
    const report = buildMonthlyReport(
      await gatherMonth(pool, month, { ...options, timeZone: period.timeZone, siteTimeZones: timeZones }),
    );
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
    months.push(month);
    periods.push({ month, timeZone: period.timeZone, from: period.from, to: period.to });
  }
  return { months, periods, exports: written };
}
