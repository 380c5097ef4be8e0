/**
 * Monthly degradation export. Each hourly tick (scheduler) exports every month that has ended in
 * a site's time zone at least settleMs ago (default 2 h, the settle time the 02:00-on-the-1st
 * schedule used to give) and has no system export yet, within the look-back. A month runs from
 * local midnight on the 1st to local midnight on the next 1st in the site's zone, and its daily
 * drift means are local days (23 or 25 hours when the clocks change); see
 * packages/monitor/src/local-calendar.ts. Sites whose zones give the month the same bounds share
 * one export (due.ts). The report is gathered by packages/monitor gatherMonth from the stored results
 * and the drift series of the analysis job (the export endpoint gathers it the same way), built with
 * buildMonthlyReport, rendered as CSV, JSON and printable HTML, and stored in
 * `exports` (kind 'monthly-degradation', created_by 'system', SHA-256 checksum), keyed by its
 * period. A missed run catches up.
 *
 * Exports made before months followed the site zone cover UTC months (their HTML says "(UTC)",
 * their JSON bounds end in 'Z'; their CSV states no period). They are kept as they were: for a UTC
 * site they are the month's export; for a site in another zone their period differs, so the months
 * of the look-back get a site-time export beside them, and older months keep only the UTC one.
 */
import { createHash } from 'node:crypto';
import { buildMonthlyReport, gatherMonth, renderReport } from '@isentrope/monitor';
import { monthlyFigures } from '@isentrope/store';
import type pg from 'pg';
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
      await gatherMonth(monthlyFigures(pool), month, {
        ...options,
        generatedAtMs: options.nowMs,
        timeZone: period.timeZone,
        siteTimeZones: timeZones,
      }),
    );
    for (const format of missing) {
      const text = renderReport(report, format);
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
