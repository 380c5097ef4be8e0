import { describe, expect, it } from 'vitest';
import { CAUTION } from '../caution.js';
import { buildMonthlyReport, J_PER_MWH, monthRange, previousMonth } from './monthly.js';
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

describe('monthRange', () => {
  it('gives the UTC calendar month, February of a leap year included', () => {
    // Gregorian calendar (common practice, no source): 2028 is a leap year.
    const r = monthRange('2028-02');
    expect(r.fromMs).toBe(Date.UTC(2028, 1, 1));
    expect((r.toMs - r.fromMs) / DAY).toBe(29);
    expect(previousMonth('2026-01')).toBe('2025-12');
    expect(() => monthRange('2026-13')).toThrow(/YYYY-MM/);
  });
});

describe('buildMonthlyReport energy lost', () => {
  it('compressor: extra power drawn = P (1 - eta/eta_b) summed over time', () => {
    // Hand calculation from the definition (common practice, no source):
    // 2 MW at 0.80 against 0.84 for 744 h: 2 x (1 - 0.80/0.84) x 744 = 70.857142... MWh.
    const report = buildMonthlyReport({
      month: '2026-03',
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
  const report = buildMonthlyReport({
    month: '2026-03',
    generatedAtMs: Date.UTC(2026, 3, 1, 2),
    machines: [{ ...constantMachine('compressor', 0.8, 0.84, 2e6, 744), name: 'Air compressor, "north"' }],
    price: { perMWh: 80.5, currency: 'EUR' },
  });

  it('CSV: BOM, header, CRLF, dot decimals, quoted fields, caution as the final comment row', () => {
    const csv = renderReportCsv(report);
    expect(csv.startsWith(CSV_BOM)).toBe(true);
    const lines = csv.slice(1).split('\r\n');
    expect(lines[0]).toBe(CSV_COLUMNS.join(','));
    expect(lines[1]).toContain('"Air compressor, ""north"""');
    expect(lines[1]).toContain(',70.857,'); // energy lost [MWh], 3 decimals
    expect(lines[1]).toContain(',-4.000,'); // drift [pts]
    expect(lines[2]).toBe(`"# ${CAUTION}"`);
    expect(lines[3]).toBe('');
  });

  it('JSON parses back with ISO dates and the caution', () => {
    const json = JSON.parse(renderReportJson(report)) as {
      from: string;
      caution: string;
      machines: { energyLostMWh: number }[];
    };
    expect(json.from).toBe('2026-03-01T00:00:00.000Z');
    expect(json.caution).toBe(CAUTION);
    expect(json.machines[0]!.energyLostMWh).toBeCloseTo(70.857142857, 6);
  });

  it('HTML escapes names, carries the caution and inline SVG charts', () => {
    const html = renderReportHtml(report);
    expect(html).toContain('Air compressor, &quot;north&quot;');
    expect(html).toContain(CAUTION);
    expect(html.match(/<svg /g)?.length).toBe(2);
    expect(html).not.toContain('<script');
  });
});
