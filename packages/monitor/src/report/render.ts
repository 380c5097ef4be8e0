/**
 * Renderers of the monthly report: CSV for spreadsheets, JSON, and a printable HTML page with
 * inline SVG charts. Every output carries the caution, and states the time zone of the month with
 * its bounds as ISO 8601 local times with UTC offsets; dates (forecasts, days) are local dates in
 * that zone.
 *
 * CSV as RFC 4180 (CRLF line ends, fields with comma, quote or line break quoted, quotes doubled),
 * preceded by a UTF-8 byte-order mark so spreadsheet programs read it as UTF-8; comment rows
 * starting with '#' first (title, time zone, period bounds), then the column header; dates ISO 8601
 * (YYYY-MM-DD), numbers with a dot decimal and no thousands separator; the caution as a final
 * comment row.
 */
import { localDateOf } from '../local-calendar.js';
import type { MonthlyMachineReport, MonthlyReport } from './monthly.js';

export const CSV_BOM = '\uFEFF';

export const CSV_COLUMNS = [
  'month',
  'site',
  'machine',
  'name',
  'kind',
  'coverage_pct',
  'results_valid',
  'results_total',
  'mean_efficiency_pct',
  'mean_baseline_pct',
  'drift_pts',
  'drift_change_pts',
  'efficiency_change_pts',
  'rate_pts_per_month',
  'rate_low_pts_per_month',
  'rate_high_pts_per_month',
  'rate_days',
  'alarm_pts',
  'forecast_status',
  'forecast_date',
  'forecast_earliest',
  'forecast_latest',
  'energy_lost_mwh',
  'cost',
  'currency',
] as const;

function csvField(v: string): string {
  return /[",\r\n]/.test(v) ? `"${v.replace(/"/g, '""')}"` : v;
}

/** A number with a dot decimal, rounded to `digits` significant decimals; '' for null/NaN. */
function fmt(v: number | null, digits: number): string {
  if (v === null || !Number.isFinite(v)) return '';
  const s = v.toFixed(digits);
  return s === `-${(0).toFixed(digits)}` ? (0).toFixed(digits) : s;
}

/** The local date (YYYY-MM-DD) of an instant in the report's zone; '' for none. */
function isoDate(report: MonthlyReport, ms: number | null): string {
  return ms === null || !Number.isFinite(ms) ? '' : localDateOf(report.timeZone, ms);
}

/** The lines that state what the report covers: month, time zone, bounds with their UTC offsets. */
export function reportPeriodLines(report: MonthlyReport): string[] {
  return [
    `Isentrope monthly degradation report ${report.month}`,
    `time zone: ${report.timeZone} (months and days are local calendar time)`,
    `period from: ${report.from} (included)`,
    `period to: ${report.to} (excluded)`,
  ];
}

function csvRow(report: MonthlyReport, m: MonthlyMachineReport): string[] {
  return [
    report.month,
    m.site,
    m.slug,
    m.name,
    m.kind,
    fmt(Number.isFinite(m.coverage) ? 100 * m.coverage : null, 1),
    String(m.resultsValid),
    String(m.resultsTotal),
    fmt(m.meanEfficiency === null ? null : 100 * m.meanEfficiency, 3),
    fmt(m.meanBaseline === null ? null : 100 * m.meanBaseline, 3),
    fmt(m.driftPts, 3),
    fmt(m.driftChangePts, 3),
    fmt(m.efficiencyChangePts, 3),
    fmt(m.ratePtsPerMonth, 3),
    fmt(m.rateLowPtsPerMonth, 3),
    fmt(m.rateHighPtsPerMonth, 3),
    String(m.rateDays),
    fmt(m.alarmPts, 2),
    m.forecast.status,
    isoDate(report, m.forecast.atMs),
    isoDate(report, m.forecast.earliestMs),
    isoDate(report, m.forecast.latestMs),
    fmt(m.energyLostMWh, 3),
    fmt(m.cost, 2),
    report.currency ?? '',
  ];
}

export function renderReportCsv(report: MonthlyReport): string {
  const lines = reportPeriodLines(report).map((l) => csvField(`# ${l}`));
  lines.push(CSV_COLUMNS.join(','));
  for (const m of report.machines) lines.push(csvRow(report, m).map(csvField).join(','));
  lines.push(csvField(`# ${report.caution}`));
  return `${CSV_BOM}${lines.join('\r\n')}\r\n`;
}

/**
 * JSON: the report as built (timeZone, from and to as local times with UTC offsets, besides the
 * epoch milliseconds), generatedAt in UTC, forecast dates as local dates; NaN becomes null.
 */
export function renderReportJson(report: MonthlyReport): string {
  return JSON.stringify(
    {
      ...report,
      generatedAt: new Date(report.generatedAtMs).toISOString(),
      machines: report.machines.map((m) => ({
        ...m,
        forecast: { ...m.forecast, date: isoDate(report, m.forecast.atMs) || null },
      })),
    },
    (_k, v: unknown) => (typeof v === 'number' && !Number.isFinite(v) ? null : v),
    2,
  );
}

function esc(s: string): string {
  return s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');
}

/** Daily drift with the Theil-Sen line and the alarm level, as inline SVG (no script, prints as is). */
export function driftChartSvg(
  m: MonthlyMachineReport,
  report: MonthlyReport,
  width = 640,
  height = 200,
): string {
  const pad = { l: 48, r: 12, t: 12, b: 28 };
  if (m.days.length === 0)
    return `<svg class="chart" width="${width}" height="${height}" role="img" aria-label="no daily drift"><text x="${width / 2}" y="${height / 2}" text-anchor="middle">no daily drift in the rate window</text></svg>`;
  const ts = m.days.map((d) => d.t);
  const ys = m.days.map((d) => d.driftPts);
  let t0 = Math.min(...ts);
  let t1 = Math.max(...ts);
  if (t1 === t0) {
    t0 -= 43_200_000;
    t1 += 43_200_000;
  }
  const levels = [...ys, 0, ...(m.alarmPts !== null ? [m.alarmPts] : [])];
  let y0 = Math.min(...levels);
  let y1 = Math.max(...levels);
  const span = y1 - y0 || 1;
  y0 -= 0.1 * span;
  y1 += 0.1 * span;
  const X = (t: number): number => pad.l + ((t - t0) / (t1 - t0)) * (width - pad.l - pad.r);
  const Y = (v: number): number => pad.t + ((y1 - v) / (y1 - y0)) * (height - pad.t - pad.b);
  const parts: string[] = [];
  parts.push(
    `<line x1="${pad.l}" x2="${width - pad.r}" y1="${Y(0).toFixed(1)}" y2="${Y(0).toFixed(1)}" class="zero"/>`,
  );
  if (m.alarmPts !== null)
    parts.push(
      `<line x1="${pad.l}" x2="${width - pad.r}" y1="${Y(m.alarmPts).toFixed(1)}" y2="${Y(m.alarmPts).toFixed(1)}" class="alarm"/>`,
      `<text x="${width - pad.r}" y="${(Y(m.alarmPts) - 3).toFixed(1)}" text-anchor="end" class="label">alarm ${esc(fmt(m.alarmPts, 1))} pts</text>`,
    );
  for (const d of m.days)
    parts.push(`<circle cx="${X(d.t).toFixed(1)}" cy="${Y(d.driftPts).toFixed(1)}" r="2" class="day"/>`);
  if (m.line !== null) {
    const at = (t: number): number => m.line!.driftAtT0 + m.line!.slopePtsPerMs * (t - m.line!.t0);
    parts.push(
      `<line x1="${X(t0).toFixed(1)}" y1="${Y(at(t0)).toFixed(1)}" x2="${X(t1).toFixed(1)}" y2="${Y(at(t1)).toFixed(1)}" class="trend"/>`,
    );
  }
  parts.push(
    `<text x="${pad.l - 4}" y="${(Y(y1) + 10).toFixed(1)}" text-anchor="end" class="label">${esc(fmt(y1, 1))}</text>`,
    `<text x="${pad.l - 4}" y="${Y(y0).toFixed(1)}" text-anchor="end" class="label">${esc(fmt(y0, 1))}</text>`,
    `<text x="${pad.l}" y="${height - 8}" class="label">${isoDate(report, t0)}</text>`,
    `<text x="${width - pad.r}" y="${height - 8}" text-anchor="end" class="label">${isoDate(report, t1)}</text>`,
  );
  return `<svg class="chart" width="${width}" height="${height}" viewBox="0 0 ${width} ${height}" role="img" aria-label="daily drift of ${esc(m.name)} [points]">${parts.join('')}</svg>`;
}

/** Energy lost per machine as horizontal bars. */
export function energyChartSvg(report: MonthlyReport, width = 640): string {
  const rows = report.machines.filter((m) => m.energyLostMWh !== null);
  const rowH = 22;
  const height = Math.max(1, rows.length) * rowH + 16;
  if (rows.length === 0)
    return `<svg class="chart" width="${width}" height="${height}" role="img" aria-label="no energy figures"><text x="8" y="16">no machine with a baseline and power</text></svg>`;
  const max = Math.max(...rows.map((m) => Math.abs(m.energyLostMWh ?? 0)), 1e-9);
  const left = 180;
  const bars = rows.map((m, i) => {
    const v = m.energyLostMWh ?? 0;
    const w = (Math.abs(v) / max) * (width - left - 90);
    const y = 8 + i * rowH;
    return (
      `<text x="${left - 6}" y="${y + 14}" text-anchor="end" class="label">${esc(m.name)}</text>` +
      `<rect x="${left}" y="${y + 3}" width="${w.toFixed(1)}" height="${rowH - 8}" class="${v >= 0 ? 'loss' : 'gain'}"/>` +
      `<text x="${(left + w + 6).toFixed(1)}" y="${y + 14}" class="label">${esc(fmt(v, 1))} MWh</text>`
    );
  });
  return `<svg class="chart" width="${width}" height="${height}" viewBox="0 0 ${width} ${height}" role="img" aria-label="energy lost per machine [MWh]">${bars.join('')}</svg>`;
}

const STYLE = `
body{font-family:system-ui,sans-serif;color:#222;background:#fff;margin:2rem;max-width:60rem}
h1{font-size:1.5rem;margin:0 0 .25rem}h2{font-size:1.15rem;margin:1.5rem 0 .25rem}
table{border-collapse:collapse;width:100%;font-variant-numeric:tabular-nums;font-size:.9rem}
th,td{border-bottom:1px solid #ddd;padding:.3rem .4rem;text-align:right}th:first-child,td:first-child{text-align:left}
.caution{border:1px solid #999;padding:.6rem .8rem;margin:1rem 0;background:#f6f6f4}
.chart{display:block;margin:.5rem 0}.chart .zero{stroke:#999;stroke-dasharray:3 3}.chart .alarm{stroke:#b3261e}
.chart .trend{stroke:#222;stroke-width:1.5}.chart .day{fill:#555}.chart .label{font-size:11px;fill:#444}
.chart .loss{fill:#8a6d3b}.chart .gain{fill:#6b8f71}.muted{color:#666}
section{page-break-inside:avoid}@media print{body{margin:0}}`;

export function renderReportHtml(report: MonthlyReport): string {
  const cur = report.currency ?? '';
  const summary = report.machines
    .map(
      (m) =>
        `<tr><td>${esc(m.name)}</td><td>${esc(fmt(Number.isFinite(m.coverage) ? 100 * m.coverage : null, 1))} %</td>` +
        `<td>${esc(fmt(m.meanEfficiency === null ? null : 100 * m.meanEfficiency, 2))} %</td>` +
        `<td>${esc(fmt(m.driftPts, 2))}</td><td>${esc(fmt(m.driftChangePts, 2))}</td>` +
        `<td>${esc(fmt(m.ratePtsPerMonth, 2))}</td><td>${esc(isoDate(report, m.forecast.atMs) || '–')}</td>` +
        `<td>${esc(fmt(m.energyLostMWh, 1))}</td><td>${esc(fmt(m.cost, 0))} ${esc(m.cost === null ? '' : cur)}</td></tr>`,
    )
    .join('');
  const sections = report.machines
    .map(
      (
        m,
      ) => `<section data-machine="${esc(m.slug)}"><h2>${esc(m.name)} <span class="muted">(${esc(m.kind)}, ${esc(m.site)})</span></h2>
<p>Daily drift against the baseline over the last ${report.rateWindowDays} local days [points of efficiency], Theil-Sen line${m.alarmPts !== null ? ' and alarm level' : ''}.
Rate ${esc(fmt(m.ratePtsPerMonth, 2) || '–')} points/month (95 % interval ${esc(fmt(m.rateLowPtsPerMonth, 2) || '–')} to ${esc(fmt(m.rateHighPtsPerMonth, 2) || '–')}).
Forecast: ${esc(m.forecast.status === 'forecast' ? `alarm level reached about ${isoDate(report, m.forecast.atMs)} (between ${isoDate(report, m.forecast.earliestMs) || '?'} and ${isoDate(report, m.forecast.latestMs) || '?'})` : m.forecast.text)}</p>
${driftChartSvg(m, report)}</section>`,
    )
    .join('\n');
  const totalCost =
    report.totals.cost === null
      ? ''
      : ` costing ${fmt(report.totals.cost, 0)} ${esc(cur)} at ${fmt(report.pricePerMWh, 2)} ${esc(cur)}/MWh`;
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><title>Degradation report ${esc(report.month)}</title>
<link rel="icon" href="data:,"><style>${STYLE}</style></head>
<body>
<h1>Monthly degradation report, ${esc(report.month)}</h1>
<p class="period">Time zone <strong>${esc(report.timeZone)}</strong>: months and days are local calendar time.
Period from <time datetime="${esc(report.from)}">${esc(report.from)}</time> (included) to <time datetime="${esc(report.to)}">${esc(report.to)}</time> (excluded).</p>
<p class="muted">Generated ${esc(new Date(report.generatedAtMs).toISOString())}.</p>
<p class="caution" role="note">${esc(report.caution)}</p>
<table><thead><tr><th>Machine</th><th>Coverage</th><th>Mean efficiency</th><th>Drift [pts]</th><th>Change [pts]</th><th>Rate [pts/month]</th><th>Alarm reached</th><th>Energy lost [MWh]</th><th>Cost</th></tr></thead>
<tbody>${summary}</tbody></table>
<h2>Energy lost</h2>
<p>Total ${esc(fmt(report.totals.energyLostMWh, 1))} MWh${totalCost}: extra power drawn by compressors, pumps and fans, output lost by turbines, against each machine's baseline.</p>
${energyChartSvg(report)}
${sections}
<p class="caution" role="note">${esc(report.caution)}</p>
</body></html>
`;
}

export type ReportFormat = 'csv' | 'json' | 'html';

/** The report rendered in one of its formats (the export endpoint and the monthly job both call this). */
export function renderReport(report: MonthlyReport, format: ReportFormat): string {
  return format === 'csv'
    ? renderReportCsv(report)
    : format === 'json'
      ? renderReportJson(report)
      : renderReportHtml(report);
}
