import { describe, expect, it } from 'vitest';
import { CAUTION } from '../caution.js';
import { localDays } from '../local-calendar.js';
import { buildMonthlyReport, J_PER_MWH } from './monthly.js';
import { CSV_BOM, CSV_COLUMNS, renderReportCsv, renderReportHtml, renderReportJson } from './render.js';

const HOUR = 3_600_000;
const DAY = 86_400_000;

/** A month of hourly results with constant efficiency, baseline and power. */
function constantMachine(
  kind: 'turbine' | 'compressor',
  eta: number,
  etaB: number,
  powerW: number,
  hours: number,
) {
  const t0 = Date.UTC(2026, 2, 1);
  const t = Array.from({ length: hours }, (_, i) => t0 + i * HOUR);
  return {
    machineId: 1,
    site: 'demo',
    slug: kind,
    name: `Invented ${kind}`,
    kind,
    results: {
      t,
      efficiency: t.map(() => eta),
      baseline: t.map(() => etaB),
      power: t.map(() => powerW),
    },
    resultsTotal: hours,
    intervalMs: HOUR,
    dailyDrift: { t: [], driftPts: [] },
  } as const;
}

describe('buildMonthlyReport in the site time zone', () => {
  it('coverage counts the hours of the local month: Europe/London, March 2026, has 743', () => {
    // EU rule: summer time from the last Sunday of March, 01:00 UTC (29 March 2026), so the local
    // month runs from 1 March 00:00 UTC to 31 March 23:00 UTC: 743 hours.
    const build = (timeZone: string) =>
      buildMonthlyReport({
        month: '2026-03',
        timeZone,
        generatedAtMs: 0,
        machines: [constantMachine('compressor', 0.8, 0.84, 2e6, 743)],
      });
    const report = build('Europe/London');
    expect(report.fromMs).toBe(Date.UTC(2026, 2, 1));
    expect(report.toMs).toBe(Date.UTC(2026, 2, 31, 23));
    expect(report.from).toBe('2026-03-01T00:00:00+00:00');
    expect(report.to).toBe('2026-04-01T00:00:00+01:00');
    expect(report.machines[0]!.coverage).toBeCloseTo(1, 12);
    // Against the UTC month (744 h) the same results cover 743/744.
    expect(build('UTC').machines[0]!.coverage).toBeCloseTo(743 / 744, 12);
  });

  it('dates its days and forecast on the local calendar: Pacific/Auckland (+13:00 in March)', () => {
    // NZDT, +13:00, all through March 2026 (New Zealand rule: daylight time until the first Sunday
    // of April, 5 April 2026, 03:00 NZDT, then NZST +12:00). Noon on 1 March in Auckland is 23:00 UTC
    // on 28 February.
    const days = localDays('Pacific/Auckland', '2026-03-01', 31);
    const mid = days.map((d) => (d.fromMs + d.toMs) / 2);
    expect(new Date(mid[0]!).toISOString()).toBe('2026-02-28T23:00:00.000Z');
    const report = buildMonthlyReport({
      month: '2026-03',
      timeZone: 'Pacific/Auckland',
      generatedAtMs: 0,
      machines: [
        {
          ...constantMachine('compressor', 0.8, 0.84, 2e6, 10),
          dailyDrift: { t: mid, driftPts: mid.map((_, i) => -0.5 - 0.1 * i) },
          alarmPts: -5,
        },
      ],
    });
    const m = report.machines[0]!;
    expect(m.days.map((d) => d.date)).toEqual(days.map((d) => d.date));
    expect(m.days[0]!.date).toBe('2026-03-01');
    // -0.1 points a day, -3.5 at noon on 31 March (NZDT): -5 is reached 15 x 24 h later, 11:00 NZST
    // on 15 April (14 April, 23:00 UTC).
    expect(m.forecast.status).toBe('forecast');
    expect(m.forecast.atMs).toBeCloseTo(mid[30]! + 15 * DAY, -3);
    const json = JSON.parse(renderReportJson(report)) as {
      timeZone: string;
      from: string;
      to: string;
      machines: { days: { date: string }[]; forecast: { date: string } }[];
    };
    expect(json.timeZone).toBe('Pacific/Auckland');
    expect(json.from).toBe('2026-03-01T00:00:00+13:00');
    expect(json.to).toBe('2026-04-01T00:00:00+13:00');
    expect(json.machines[0]!.days[0]!.date).toBe('2026-03-01');
    expect(json.machines[0]!.forecast.date).toBe('2026-04-15');
  });
});

describe('buildMonthlyReport energy lost', () => {
  it('compressor: extra power drawn = P (1 - eta/eta_b) summed over time', () => {
    // Hand calculation from the definition (common practice, no source):
    // 2 MW at 0.80 against 0.84 for 744 h: 2 x (1 - 0.80/0.84) x 744 = 70.857142... MWh.
    const report = buildMonthlyReport({
      month: '2026-03',
      timeZone: 'UTC',
      generatedAtMs: 0,
      machines: [constantMachine('compressor', 0.8, 0.84, 2e6, 744)],
      price: { perMWh: 80, currency: 'EUR' },
    });
    const m = report.machines[0]!;
    expect(m.energyLostMWh).toBeCloseTo(2 * (1 - 0.8 / 0.84) * 744, 9);
    expect(m.cost).toBeCloseTo(2 * (1 - 0.8 / 0.84) * 744 * 80, 6);
    expect(m.coverage).toBeCloseTo(1, 12); // 744 h of 744 h in March
    expect(m.driftPts).toBeCloseTo(-4, 10);
    expect(m.meanEfficiency).toBeCloseTo(0.8, 12);
    expect(report.totals.energyLostMWh).toBeCloseTo(m.energyLostMWh!, 12);
  });

  it('turbine: output lost = P (eta_b/eta - 1), and half a month gives half coverage', () => {
    // Hand calculation from the definition (common practice, no source):
    // 10 MW at 0.85 against 0.88 for 372 h: 10 x (0.88/0.85 - 1) x 372 = 131.294117... MWh.
    const report = buildMonthlyReport({
      month: '2026-03',
      timeZone: 'UTC',
      generatedAtMs: 0,
      machines: [constantMachine('turbine', 0.85, 0.88, 10e6, 372)],
    });
    const m = report.machines[0]!;
    expect(m.energyLostMWh).toBeCloseTo(10 * (0.88 / 0.85 - 1) * 372, 9);
    expect(m.cost).toBeNull();
    expect(m.coverage).toBeCloseTo(0.5, 12);
    expect(J_PER_MWH).toBe(3.6e9); // 1 MWh = 3600 s x 1e6 W (SI definition)
  });

  it('gives the Theil-Sen rate and a forecast for a steady linear loss', () => {
    // A line of -0.1 points/day: Theil-Sen returns the exact slope of collinear points
    // (Sen 1968, the median of identical pairwise slopes); -0.1 x 30.44 = -3.044 points/month.
    const days = Array.from({ length: 30 }, (_, i) => Date.UTC(2026, 2, 1) + i * DAY + DAY / 2);
    const drift = days.map((_, i) => -0.5 - 0.1 * i);
    const m0 = constantMachine('compressor', 0.8, 0.84, 2e6, 10);
    const report = buildMonthlyReport({
      month: '2026-03',
      timeZone: 'UTC',
      generatedAtMs: 0,
      machines: [{ ...m0, dailyDrift: { t: days, driftPts: drift }, alarmPts: -5 }],
    });
    const m = report.machines[0]!;
    expect(m.ratePtsPerMonth).toBeCloseTo(-3.044, 9);
    expect(m.forecast.status).toBe('forecast');
    // Last day drift -3.4 at day index 29; -5 is reached 16 days later.
    expect(m.forecast.atMs).toBeCloseTo(days[29]! + 16 * DAY, -3);
  });
});

describe('renderers', () => {
  // Europe/Berlin: CET (+01:00), CEST (+02:00) from 29 March 2026 (EU rule: last Sunday of March).
  const report = buildMonthlyReport({
    month: '2026-03',
    timeZone: 'Europe/Berlin',
    generatedAtMs: Date.UTC(2026, 3, 1, 2),
    machines: [{ ...constantMachine('compressor', 0.8, 0.84, 2e6, 744), name: 'Air compressor, "north"' }],
    price: { perMWh: 80.5, currency: 'EUR' },
  });

  it('CSV: BOM, zone and bounds, header, CRLF, dot decimals, quoted fields, caution last', () => {
    const csv = renderReportCsv(report);
    expect(csv.startsWith(CSV_BOM)).toBe(true);
    const lines = csv.slice(1).split('\r\n');
    expect(lines.slice(0, 4)).toEqual([
      '# Isentrope monthly degradation report 2026-03',
      '# time zone: Europe/Berlin (months and days are local calendar time)',
      '# period from: 2026-03-01T00:00:00+01:00 (included)',
      '# period to: 2026-04-01T00:00:00+02:00 (excluded)',
    ]);
    expect(lines[4]).toBe(CSV_COLUMNS.join(','));
    expect(lines[5]).toContain('"Air compressor, ""north"""');
    expect(lines[5]).toContain(',70.857,'); // energy lost [MWh], 3 decimals
    expect(lines[5]).toContain(',-4.000,'); // drift [pts]
    expect(lines[6]).toBe(`"# ${CAUTION}"`);
    expect(lines[7]).toBe('');
  });

  it('JSON parses back with the zone, the bounds with their UTC offsets and the caution', () => {
    const json = JSON.parse(renderReportJson(report)) as {
      timeZone: string;
      from: string;
      to: string;
      fromMs: number;
      caution: string;
      machines: { energyLostMWh: number }[];
    };
    expect(json.timeZone).toBe('Europe/Berlin');
    expect(json.from).toBe('2026-03-01T00:00:00+01:00');
    expect(json.to).toBe('2026-04-01T00:00:00+02:00');
    expect(json.fromMs).toBe(Date.UTC(2026, 1, 28, 23));
    expect(json.caution).toBe(CAUTION);
    expect(json.machines[0]!.energyLostMWh).toBeCloseTo(70.857142857, 6);
  });

  it('HTML states zone and bounds, escapes names, carries the caution and inline SVG charts', () => {
    const html = renderReportHtml(report);
    expect(html).toContain('Time zone <strong>Europe/Berlin</strong>');
    expect(html).toContain('<time datetime="2026-03-01T00:00:00+01:00">');
    expect(html).toContain('<time datetime="2026-04-01T00:00:00+02:00">');
    expect(html).toContain('Air compressor, &quot;north&quot;');
    expect(html).toContain(CAUTION);
    expect(html.match(/<svg /g)?.length).toBe(2);
    expect(html).not.toContain('<script');
  });
});
