/**
 * Gauge/absolute pressure mix-ups in the running jobs: the reading, storing and scheduling of the
 * instrument step whose logic is packages/compute (instrument.ts: the detector over the window,
 * the machine cross-check, the plan against the stored findings). Runs in the alerts tick after
 * the compute job has written its results and before the analysis and alert passes
 * (compute -> this step -> analysis -> alerts), and before a backfill of the analysis.
 *
 * Per machine, in one transaction: the results' p_in / p_out of a trailing window (default 3
 * days, far longer than the detector's 2 x 15 points) with the site's ambient pressure
 * (configured, else the median of the barometer tag over the window); per pressure role the stored
 * findings (instrument_findings, migrations/0005) locked, the plan stored (new findings, reverts).
 * The rows never get their flags here: when a finding changes, the compute pass recomputes the
 * machine's stored rows from the change on (recomputeStoredRows), and the compute pass flags every
 * row a stored finding covers (`fault:gauge-absolute:<role>`, valid = false) whenever it computes
 * it, so a recompute keeps the flag. The alert job then raises an instrument alert on the tag and
 * the drift statistics leave the points out. An absolute pressure at or below zero is flagged per
 * point by the compute pass itself (`fault:pressure-not-positive:<role>`).
 */
import {
  crossCheckStep,
  findGaugeAbsoluteSteps,
  type GaugeStepOptions,
  gridRangesFrom,
  type MachineRow,
  type PressureRole,
  planFindings,
  prepareTag,
  type ResultWindow,
} from '@isentrope/compute';
import { inTransaction, percentileCont, readSeries } from '@isentrope/store';
import { parseQuantity } from '@isentrope/thermo';
import type pg from 'pg';
import { recomputeStoredRows } from '../compute/job.js';
import { loadMachines, type Queryable } from '../queries/machines.js';
import { endFinding, insertFinding, lockFindings } from './findings-store.js';

export { GAUGE_ABSOLUTE_FAULT, PRESSURE_NOT_POSITIVE_FAULT, type PressureRole } from '@isentrope/compute';

const ROLES: readonly PressureRole[] = ['inletPressure', 'outletPressure'];

export interface GaugeAbsoluteJobOptions {
  /** Tick time [ms]: results up to and including it are judged. */
  readonly nowMs: number;
  readonly machineIds?: readonly number[];
  /** Trailing window of the step detector [ms]; default 3 days; Infinity = all results (a backfill). */
  readonly windowMs?: number;
  /** Grid step of the results [ms]; default 60 000 (two findings within a window of points are one). */
  readonly stepMs?: number;
  /** Points in each detector window; default 15 (the detector's default). */
  readonly windowPoints?: number;
}

export interface GaugeAbsoluteSkip {
  readonly machineId: number;
  readonly reason: string;
}

export interface GaugeAbsoluteRunStats {
  readonly machines: number;
  /** Findings stored this run: standing, dismissed (real process change), and findings ended by a revert. */
  readonly standing: number;
  readonly dismissed: number;
  readonly reverted: number;
  /** Result rows the compute pass recomputed because a finding changed. */
  readonly recomputedRows: number;
  readonly skipped: readonly GaugeAbsoluteSkip[];
}

const DAY_MS = 86_400_000;

/** The site's ambient pressure [Pa]: configured, else the barometer's median over [fromMs, toMs]. */
async function ambientOf(
  db: pg.PoolClient,
  row: MachineRow,
  fromMs: number,
  toMs: number,
): Promise<number | undefined> {
  if (row.siteAmbientPressure !== null) return parseQuantity(row.siteAmbientPressure).valueSI;
  if (row.barometer === undefined) return undefined;
  const baro = prepareTag(row.barometer);
  // Hot rows and packed blocks alike; [fromMs, toMs] inclusive, times are whole microseconds.
  const series = await readSeries(db, [baro.id], Number.isFinite(fromMs) ? fromMs : -Infinity, toMs + 0.001);
  const m = percentileCont(series.get(baro.id)?.values ?? [], 0.5);
  // A barometer reads absolute; a gauge barometer would make no sense and is not corrected.
  return m === undefined ? undefined : baro.intercept + baro.slope * m;
}

interface ResultDb {
  t: number;
  p_in: number | null;
  p_out: number | null;
  t_in: number | null;
  t_out: number | null;
  running: boolean;
}

/** The machine's results over [fromMs, toMs], as columns (NaN where a value is absent). */
async function readWindow(
  db: Queryable,
  machineId: number,
  fromMs: number,
  toMs: number,
): Promise<ResultWindow> {
  const r = await db.query<ResultDb>(
    `SELECT (extract(epoch FROM time) * 1000)::float8 AS t, p_in, p_out, t_in, t_out,
            NOT ('not-running' = ANY(flags)) AS running
       FROM results
      WHERE machine_id = $1 AND ($2::float8 IS NULL OR time >= to_timestamp($2::float8 / 1000))
        AND time <= to_timestamp($3::float8 / 1000)
      ORDER BY time`,
    [machineId, Number.isFinite(fromMs) ? fromMs : null, toMs],
  );
  const n = r.rows.length;
  const w = {
    t: new Float64Array(n),
    pIn: new Float64Array(n),
    pOut: new Float64Array(n),
    TIn: new Float64Array(n),
    TOut: new Float64Array(n),
    running: new Uint8Array(n),
  };
  r.rows.forEach((x, i) => {
    w.t[i] = x.t;
    w.pIn[i] = x.p_in ?? Number.NaN;
    w.pOut[i] = x.p_out ?? Number.NaN;
    w.TIn[i] = x.t_in ?? Number.NaN;
    w.TOut[i] = x.t_out ?? Number.NaN;
    w.running[i] = x.running ? 1 : 0;
  });
  return w;
}

interface MachineOutcome {
  standing: number;
  dismissed: number;
  reverted: number;
  /** Earliest time whose rows' flags changed [ms]. */
  changedFromMs: number | undefined;
  window: ResultWindow | undefined;
  skip?: string;
}

/** One pressure role: the steps of the window against the stored findings, the plan stored. */
async function roleStep(
  client: pg.PoolClient,
  row: MachineRow,
  role: PressureRole,
  w: ResultWindow,
  ambient: number,
  o: GaugeStepOptions,
  out: MachineOutcome,
): Promise<void> {
  const tag = row.tags.find((x) => x.role === role);
  if (tag === undefined) return;
  const steps = findGaugeAbsoluteSteps(w, role, ambient, o);
  const stored = await lockFindings(client, row.id, role);
  const plan = planFindings(
    stored,
    steps,
    (f) => crossCheckStep(row.kind, role, f, w, ambient, o.windowPoints),
    o,
  );
  for (const r of plan.reverts) await endFinding(client, r.id, r.endedAt);
  out.reverted += plan.reverts.length;
  for (const n of plan.inserts) {
    if (!(await insertFinding(client, { machineId: row.id, tagId: tag.id, role, ambient }, n))) continue;
    if (n.judged === 'standing') out.standing++;
    else out.dismissed++;
    if (n.status === 'reverted') out.reverted++;
  }
  const c = plan.changedFromMs;
  if (c !== undefined)
    out.changedFromMs = out.changedFromMs === undefined ? c : Math.min(out.changedFromMs, c);
}

async function machineStep(
  client: pg.PoolClient,
  row: MachineRow,
  o: Required<Omit<GaugeAbsoluteJobOptions, 'machineIds'>>,
): Promise<MachineOutcome> {
  const out: MachineOutcome = {
    standing: 0,
    dismissed: 0,
    reverted: 0,
    changedFromMs: undefined,
    window: undefined,
  };
  const fromMs = o.nowMs - o.windowMs;
  const ambient = await ambientOf(client, row, fromMs, o.nowMs);
  if (ambient === undefined)
    return { ...out, skip: 'no ambient pressure (site value or barometer readings)' };
  out.window = await readWindow(client, row.id, fromMs, o.nowMs);
  for (const role of ROLES) await roleStep(client, row, role, out.window, ambient, o, out);
  return out;
}

/**
 * One pass of the gauge/absolute step over every machine not retired (or the given ones); each
 * machine in its own transaction. Idempotent: a second run with the same data changes nothing.
 */
export async function runGaugeAbsoluteOnce(
  pool: pg.Pool,
  options: GaugeAbsoluteJobOptions,
): Promise<GaugeAbsoluteRunStats> {
  const o = {
    nowMs: options.nowMs,
    windowMs: options.windowMs ?? 3 * DAY_MS,
    stepMs: options.stepMs ?? 60_000,
    windowPoints: options.windowPoints ?? 15,
  };
  const machines = await loadMachines(pool, options.machineIds);
  const skipped: GaugeAbsoluteSkip[] = [];
  const stats = { standing: 0, dismissed: 0, reverted: 0, recomputedRows: 0 };
  for (const row of machines) {
    if (row.outOfService) continue;
    // The rows are recomputed after the step's transaction has committed its findings.
    const r = await inTransaction(pool, (client) => machineStep(client, row, o));
    if (r.skip !== undefined) skipped.push({ machineId: row.id, reason: r.skip });
    stats.standing += r.standing;
    stats.dismissed += r.dismissed;
    stats.reverted += r.reverted;
    // The compute pass rewrites the rows whose flags the change touches, reading the findings anew.
    if (r.changedFromMs !== undefined && r.window !== undefined)
      stats.recomputedRows += await recomputeStoredRows(
        pool,
        row,
        gridRangesFrom(r.window.t, r.changedFromMs),
      );
  }
  return { machines: machines.length, ...stats, skipped };
}
