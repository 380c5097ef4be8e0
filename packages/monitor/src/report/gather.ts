/**
 * The one gatherer of a monthly report's input, used by the export endpoint (on demand) and the
 * scheduled monthly job alike, so both give the same report for the same month. It reads only
 * stored figures through a small repository handed in (packages/store monthlyFigures): the valid
 * results of the month and of the month before with the baseline efficiency and drift the analysis
 * job wrote onto each row, the daily drift means over the rate window, and the alarm level the
 * analysis job stored. Nothing is derived again here; the figures are built by buildMonthlyReport.
 *
 * The month and its days are local calendar time in the report's zone (the site's): local
 * midnight to local midnight, so 23 or 25 hours on the days the clocks change (../local-calendar.ts).
 */
import { MonitorBadInputError } from '../errors.js';
import {
  addDays,
  addMonths,
  type LocalDay,
  localDays,
  localMonth,
  previousMonth,
  sharedMonthZone,
} from '../local-calendar.js';
import type { MonthlyMachineInput, MonthlyReportInput, ReportMachineKind } from './monthly.js';

/** What the gatherer reads; packages/store monthlyFigures(db) gives it from the database. */
export interface MonthlyFiguresSource {
  machines(): Promise<
    readonly {
      readonly id: number;
      readonly site: string;
      readonly slug: string;
      readonly name: string;
      readonly kind: ReportMachineKind;
      readonly timeZone: string;
      readonly retiredMs: number | null;
    }[]
  >;
  /** Valid results of [fromMs, toMs) in time order, the count of all stored rows, and the means of efficiency and stored drift. */
  spanResults(
    machineId: number,
    fromMs: number,
    toMs: number,
  ): Promise<{
    readonly t: ArrayLike<number>;
    readonly efficiency: ArrayLike<number>;
    readonly baseline: ArrayLike<number>;
    readonly power: ArrayLike<number>;
    readonly total: number;
    readonly meanEfficiency: number | null;
    readonly meanDrift: number | null;
  }>;
  /** Daily means of the stored drift over the given days, days with at least minPoints. */
  dailyDriftMeans(
    machineId: number,
    days: readonly LocalDay[],
    minPoints: number,
  ): Promise<{ readonly t: ArrayLike<number>; readonly driftPts: ArrayLike<number> }>;
  /** The stored drift alarm level [%-points, negative], undefined when none. */
  alarmPts(machineId: number): Promise<number | undefined>;
}

export interface GatherMonthOptions {
  /** When the report is made [ms]: both ways of making an export pass their own clock. */
  readonly generatedAtMs: number;
  /** Zone the month and its days are cut in; default the zone of the selected machines' sites. */
  readonly timeZone?: string | undefined;
  /** Only machines of sites in these zones; default every site. */
  readonly siteTimeZones?: readonly string[] | undefined;
  /** Only these machines (ids); default every one not retired before the month. */
  readonly machineIds?: readonly number[] | undefined;
  readonly price?: { readonly perMWh: number; readonly currency: string } | undefined;
  /** Local days of daily drift the rate rests on, ending with the month; default 90. */
  readonly rateWindowDays?: number | undefined;
  /** Fewest usable results for a day to count in the rate; default 60 (as the analysis job's rate). */
  readonly minPointsPerDay?: number | undefined;
}

/** The report input of `month` ('YYYY-MM' in the report's zone) from stored figures. */
export async function gatherMonth(
  source: MonthlyFiguresSource,
  month: string,
  options: GatherMonthOptions,
): Promise<MonthlyReportInput> {
  const sites = options.siteTimeZones;
  const ids = options.machineIds;
  const selected = (await source.machines()).filter(
    (m) => (sites === undefined || sites.includes(m.timeZone)) && (ids === undefined || ids.includes(m.id)),
  );
  const zones = [...new Set(selected.map((m) => m.timeZone))];
  const timeZone = options.timeZone ?? sharedMonthZone(month, zones);
  if (timeZone === undefined)
    throw new MonitorBadInputError(
      'timeZone',
      zones.sort().join(', '),
      `the machines are at sites in time zones whose month ${month} differs; name the report's zone or choose machines of one site`,
    );
  const { fromMs, toMs } = localMonth(month, timeZone);
  const prev = localMonth(previousMonth(month), timeZone);
  const windowDays = options.rateWindowDays ?? 90;
  const rateDays = localDays(timeZone, addDays(`${addMonths(month, 1)}-01`, -windowDays), windowDays);
  const out: MonthlyMachineInput[] = [];
  for (const m of selected) {
    if (m.retiredMs !== null && m.retiredMs <= fromMs) continue;
    const cur = await source.spanResults(m.id, fromMs, toMs);
    const before = await source.spanResults(m.id, prev.fromMs, prev.toMs);
    const days = await source.dailyDriftMeans(m.id, rateDays, options.minPointsPerDay ?? 60);
    out.push({
      machineId: m.id,
      site: m.site,
      slug: m.slug,
      name: m.name,
      kind: m.kind,
      results: { t: cur.t, efficiency: cur.efficiency, baseline: cur.baseline, power: cur.power },
      resultsTotal: cur.total,
      dailyDrift: { t: days.t, driftPts: days.driftPts },
      alarmPts: await source.alarmPts(m.id),
      previous: { meanEfficiency: before.meanEfficiency, driftPts: before.meanDrift },
    });
  }
  return {
    month,
    timeZone,
    generatedAtMs: options.generatedAtMs,
    machines: out,
    price: options.price,
    rateWindowDays: windowDays,
  };
}
