/**
 * Monthly degradation report for planners: per machine and calendar month in the report's time
 * zone (the site's: local midnight on the 1st to local midnight on the next 1st, see
 * ../local-calendar.ts), the data
 * coverage, mean efficiency, drift against the baseline, its change since the previous month,
 * the degradation rate (Theil-Sen on daily drift means, see ../degradation.ts), the forecast date
 * of reaching the alarm band, and the energy the loss of efficiency costs.
 *
 * Energy lost, per valid result i standing for a time step dt_i (its compute window):
 *   driven machines (compressor, pump, fan): the extra power drawn,
 *     E = sum P_i (1 - eta_i / eta_b,i) dt_i,
 *     since the shaft power at the baseline efficiency would be P_i eta_i / eta_b,i for the same duty;
 *   turbines: the output not produced,
 *     E = sum P_i (eta_b,i / eta_i - 1) dt_i,
 *     since the same steam flow at the baseline efficiency gives P_i eta_b,i / eta_i.
 * A result better than its baseline gives a negative term (energy gained); the sum keeps the sign.
 * P is the machine's power [W] (magnitude); 1 MWh = 3.6e9 J.
 *
 * Pure: ./gather.ts gathers the stored results (the one gatherer of the export endpoint and the
 * monthly job) and ./render.ts renders the report.
 */
import { CAUTION } from '../caution.js';
import { degradation } from '../degradation.js';
import { MonitorBadInputError } from '../errors.js';
import { localDateOf, localMonth } from '../local-calendar.js';
import { medianInPlace } from '../stats.js';

export type ReportMachineKind = 'turbine' | 'compressor' | 'pump' | 'fan';

/** 1 MWh in J. */
export const J_PER_MWH = 3.6e9;

export interface MonthlyMachineInput {
  readonly machineId: number;
  readonly site: string;
  readonly slug: string;
  readonly name: string;
  readonly kind: ReportMachineKind;
  /** Valid results of the month, in time order: time [ms], efficiency [-], baseline efficiency at the result's operating point [-] (NaN when none), power [W]. */
  readonly results: {
    readonly t: ArrayLike<number>;
    readonly efficiency: ArrayLike<number>;
    readonly baseline: ArrayLike<number>;
    readonly power: ArrayLike<number>;
  };
  /** Results stored in the month, valid or not (for the valid share). */
  readonly resultsTotal: number;
  /** Time one result stands for [ms] (the compute window); default: the median spacing of the results. */
  readonly intervalMs?: number | undefined;
  /** Daily drift means [%-points] over the rate window (may reach back before the month), mid-points [ms] of the report zone's local days. */
  readonly dailyDrift: { readonly t: ArrayLike<number>; readonly driftPts: ArrayLike<number> };
  /** Alarm level of the drift [%-points], negative; undefined when no bands are set. */
  readonly alarmPts?: number | undefined;
  /** Previous month's mean efficiency [-] and mean drift [%-points], when known. */
  readonly previous?:
    | { readonly meanEfficiency: number | null; readonly driftPts: number | null }
    | undefined;
}

export interface MonthlyReportInput {
  /** Calendar month, 'YYYY-MM', in timeZone. */
  readonly month: string;
  /** IANA time zone of the month and its days (the site's), e.g. 'Europe/Berlin' or 'UTC'. */
  readonly timeZone: string;
  readonly generatedAtMs: number;
  readonly machines: readonly MonthlyMachineInput[];
  /** Energy price, currency per MWh; omit for no cost column values. */
  readonly price?: { readonly perMWh: number; readonly currency: string } | undefined;
  /** Days of daily drift the rate rests on (for the report's text); default 90. */
  readonly rateWindowDays?: number | undefined;
}

export interface MonthlyMachineReport {
  readonly machineId: number;
  readonly site: string;
  readonly slug: string;
  readonly name: string;
  readonly kind: ReportMachineKind;
  /** Share of the month covered by valid results, 0..1. */
  readonly coverage: number;
  readonly resultsValid: number;
  readonly resultsTotal: number;
  /** [ms] */
  readonly intervalMs: number | null;
  /** Mean isentropic efficiency [-] of the valid results; null without any. */
  readonly meanEfficiency: number | null;
  /** Mean baseline efficiency at the same operating points [-]. */
  readonly meanBaseline: number | null;
  /** Mean of (efficiency - baseline) [%-points], negative = loss. */
  readonly driftPts: number | null;
  /** Drift minus the previous month's drift [%-points]. */
  readonly driftChangePts: number | null;
  /** Mean efficiency minus the previous month's [%-points]. */
  readonly efficiencyChangePts: number | null;
  /** Theil-Sen rate [%-points per month], with its confidence limits; null with too few days. */
  readonly ratePtsPerMonth: number | null;
  readonly rateLowPtsPerMonth: number | null;
  readonly rateHighPtsPerMonth: number | null;
  readonly rateDays: number;
  readonly alarmPts: number | null;
  readonly forecast: {
    readonly status: 'forecast' | 'reached' | 'none';
    readonly atMs: number | null;
    readonly earliestMs: number | null;
    readonly latestMs: number | null;
    readonly text: string;
  };
  /** Energy lost in the month [MWh] (extra power drawn, or output lost for turbines); null without a baseline. */
  readonly energyLostMWh: number | null;
  /** Its cost [currency]; null without a price or a baseline. */
  readonly cost: number | null;
  /** Daily drift means of the rate window, for the charts: mid-point [ms] and local date of each day. */
  readonly days: readonly { readonly t: number; readonly date: string; readonly driftPts: number }[];
  /** The Theil-Sen line: drift at a time t [ms] is intercept + slope (t - t0); null without a rate. */
  readonly line: { readonly t0: number; readonly driftAtT0: number; readonly slopePtsPerMs: number } | null;
}

export interface MonthlyReport {
  readonly month: string;
  /** IANA time zone the month and its days are cut in. */
  readonly timeZone: string;
  /** [fromMs, toMs): local midnight on the 1st to local midnight on the next 1st. */
  readonly fromMs: number;
  readonly toMs: number;
  /** The bounds as ISO 8601 local times with their UTC offsets, e.g. '2026-03-01T00:00:00+01:00'. */
  readonly from: string;
  readonly to: string;
  readonly generatedAtMs: number;
  readonly currency: string | null;
  readonly pricePerMWh: number | null;
  readonly rateWindowDays: number;
  readonly machines: readonly MonthlyMachineReport[];
  readonly totals: { readonly energyLostMWh: number; readonly cost: number | null };
  readonly caution: string;
}

function medianSpacing(t: ArrayLike<number>): number | null {
  if (t.length < 2) return null;
  const d: number[] = [];
  for (let i = 1; i < t.length; i++) {
    const dt = (t[i] as number) - (t[i - 1] as number);
    if (dt > 0) d.push(dt);
  }
  return d.length === 0 ? null : medianInPlace(d);
}

function machineReport(
  m: MonthlyMachineInput,
  fromMs: number,
  toMs: number,
  timeZone: string,
  price: MonthlyReportInput['price'],
): MonthlyMachineReport {
  const { t, efficiency, baseline, power } = m.results;
  const n = t.length;
  if (efficiency.length !== n || baseline.length !== n || power.length !== n)
    throw new MonitorBadInputError(
      `results of ${m.slug}`,
      n,
      'efficiency, baseline and power must match t in length',
    );
  const interval = m.intervalMs ?? medianSpacing(t);
  if (interval !== null && !(interval > 0))
    throw new MonitorBadInputError('intervalMs', interval, 'must be > 0');

  let sumEta = 0;
  let nEta = 0;
  let sumBase = 0;
  let sumDrift = 0;
  let nBase = 0;
  let energyJ = 0;
  let nEnergy = 0;
  const turbine = m.kind === 'turbine';
  for (let i = 0; i < n; i++) {
    const eta = efficiency[i] as number;
    if (!Number.isFinite(eta)) continue;
    sumEta += eta;
    nEta++;
    const eb = baseline[i] as number;
    if (!Number.isFinite(eb)) continue;
    sumBase += eb;
    sumDrift += eta - eb;
    nBase++;
    const p = Math.abs(power[i] as number);
    if (interval !== null && Number.isFinite(p) && eta > 0 && eb > 0) {
      const lostW = turbine ? p * (eb / eta - 1) : p * (1 - eta / eb);
      energyJ += lostW * (interval / 1000);
      nEnergy++;
    }
  }
  const meanEfficiency = nEta > 0 ? sumEta / nEta : null;
  const meanBaseline = nBase > 0 ? sumBase / nBase : null;
  const driftPts = nBase > 0 ? (100 * sumDrift) / nBase : null;
  const energyLostMWh = nEnergy > 0 ? energyJ / J_PER_MWH : null;
  const coverage =
    interval === null ? (n > 0 ? Number.NaN : 0) : Math.min(1, (nEta * interval) / (toMs - fromMs));

  const prev = m.previous;
  const driftChangePts =
    driftPts !== null && prev?.driftPts !== undefined && prev.driftPts !== null
      ? driftPts - prev.driftPts
      : null;
  const efficiencyChangePts =
    meanEfficiency !== null && prev?.meanEfficiency !== undefined && prev.meanEfficiency !== null
      ? 100 * (meanEfficiency - prev.meanEfficiency)
      : null;

  const days: { t: number; date: string; driftPts: number }[] = [];
  for (let i = 0; i < m.dailyDrift.t.length; i++) {
    const dt = m.dailyDrift.t[i] as number;
    const dv = m.dailyDrift.driftPts[i] as number;
    if (Number.isFinite(dt) && Number.isFinite(dv))
      days.push({ t: dt, date: localDateOf(timeZone, dt), driftPts: dv });
  }
  const finite = (v: number): number | null => (Number.isFinite(v) ? v : null);
  let rate: number | null = null;
  let rateLow: number | null = null;
  let rateHigh: number | null = null;
  let line: MonthlyMachineReport['line'] = null;
  let forecast: MonthlyMachineReport['forecast'] = {
    status: 'none',
    atMs: null,
    earliestMs: null,
    latestMs: null,
    text: 'No bands set: no alarm level to forecast.',
  };
  if (m.alarmPts !== undefined) {
    const d = degradation(
      days.map((x) => x.t),
      days.map((x) => x.driftPts),
      { alarmPts: m.alarmPts },
    );
    rate = finite(d.ratePtsPerMonth);
    rateLow = finite(d.rateLowPtsPerMonth);
    rateHigh = finite(d.rateHighPtsPerMonth);
    const f = d.forecast;
    forecast =
      f.status === 'forecast'
        ? {
            status: 'forecast',
            atMs: f.atMs,
            earliestMs: finite(f.earliestMs),
            latestMs: finite(f.latestMs),
            text: 'Theil-Sen line reaches the alarm level',
          }
        : f.status === 'reached'
          ? { status: 'reached', atMs: finite(f.atMs), earliestMs: null, latestMs: null, text: f.reason }
          : { status: 'none', atMs: null, earliestMs: null, latestMs: null, text: f.text };
    const last = days.at(-1);
    if (rate !== null && last !== undefined && Number.isFinite(d.currentPts))
      line = { t0: last.t, driftAtT0: d.currentPts, slopePtsPerMs: d.ratePtsPerMonth / (30.44 * 86_400_000) };
  }
  return {
    machineId: m.machineId,
    site: m.site,
    slug: m.slug,
    name: m.name,
    kind: m.kind,
    coverage,
    resultsValid: nEta,
    resultsTotal: m.resultsTotal,
    intervalMs: interval,
    meanEfficiency,
    meanBaseline,
    driftPts,
    driftChangePts,
    efficiencyChangePts,
    ratePtsPerMonth: rate,
    rateLowPtsPerMonth: rateLow,
    rateHighPtsPerMonth: rateHigh,
    rateDays: days.length,
    alarmPts: m.alarmPts ?? null,
    forecast,
    energyLostMWh,
    cost: energyLostMWh !== null && price !== undefined ? energyLostMWh * price.perMWh : null,
    days,
    line,
  };
}

/** Build the month's report from the gathered input. Pure and deterministic. */
export function buildMonthlyReport(input: MonthlyReportInput): MonthlyReport {
  const period = localMonth(input.month, input.timeZone);
  const { fromMs, toMs } = period;
  const price = input.price;
  if (price !== undefined && !(price.perMWh >= 0 && Number.isFinite(price.perMWh)))
    throw new MonitorBadInputError('price.perMWh', price.perMWh, 'must be a finite number >= 0');
  const machines = input.machines.map((m) => machineReport(m, fromMs, toMs, input.timeZone, price));
  let energy = 0;
  for (const m of machines) energy += m.energyLostMWh ?? 0;
  return {
    month: input.month,
    timeZone: input.timeZone,
    fromMs,
    toMs,
    from: period.from,
    to: period.to,
    generatedAtMs: input.generatedAtMs,
    currency: price?.currency ?? null,
    pricePerMWh: price?.perMWh ?? null,
    rateWindowDays: input.rateWindowDays ?? 90,
    machines,
    totals: { energyLostMWh: energy, cost: price === undefined ? null : energy * price.perMWh },
    caution: CAUTION,
  };
}
