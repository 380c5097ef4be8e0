/**
 * Gauge/absolute pressure mix-ups in the running jobs (the fault pattern is common practice, no
 * source; the detectors are packages/monitor/src/instrument). Runs in the alerts tick after the
 * compute job has written its results and before the analysis and alert passes
 * (compute -> this step -> analysis -> alerts), and before a backfill of the analysis.
 *
 * Per machine and pressure role (inletPressure, outletPressure):
 *  1. detectGaugeAbsoluteStep over the results' p_in / p_out of a trailing window (default 3 days,
 *     far longer than the detector's 2 x 15 points), points where the machine runs only (a row
 *     flagged 'not-running' or without the pressure is NaN), with the site's ambient pressure
 *     (configured, else the median of the barometer tag over the window).
 *  2. A new step is checked through the machine with pressureRatioConsistency for compressors
 *     and turbines: 'consistent' (the temperatures followed the pressure: a real process change)
 *     dismisses it. Pumps (liquid: the temperatures do not follow the pressure) and fans (pressure
 *     ratio near 1: the exponent is ill-conditioned) are not cross-checked, nor a machine whose
 *     data cannot feed the check (too few points, ratio near 1): the tag's step stands alone.
 *  3. Every finding is kept in instrument_findings (migrations/0005), so it outlives the window.
 *     A later step of the opposite direction back to the level before (`revertsAt`) ends it.
 *  4. Every result from a standing finding's step on (to nowMs; over [at, ended_at) for a
 *     reverted one) gets `fault:gauge-absolute:<role>` and valid = false, once: the alert job
 *     raises an instrument alert on the tag, the drift statistics leave the points out. Rows the
 *     compute job rewrites lose the flag; the next run puts it back.
 *  5. Per point: an absolute pressure <= 0 (checkAbsolutePressurePlausible, 'not-positive': a
 *     gauge transmitter on an absolute tag, e.g. at an atmospheric inlet) gets
 *     `fault:pressure-not-positive:<role>` and valid = false, over the window.
 * Which side of a step is wrong is not decided by the data (a repair looks like the opposite
 * mix-up): a lone reads-low step is reported as a gauge transmitter on an absolute tag.
 */
import {
  checkAbsolutePressurePlausible,
  detectGaugeAbsoluteStep,
  type GaugeAbsoluteFinding,
  MonitorError,
  type PressureRatioConsistency,
  pressureRatioConsistency,
} from '@isentrope/monitor';
import { percentileCont, readSeries } from '@isentrope/store';
import { parseQuantity } from '@isentrope/thermo';
import type pg from 'pg';
import { type MachineRow, prepareTag } from '../compute/config.js';
import { loadMachines, type Queryable } from '../queries/machines.js';

/** Fault names as they appear in result flags (`fault:<name>:<role>`). */
export const GAUGE_ABSOLUTE_FAULT = 'gauge-absolute';
export const PRESSURE_NOT_POSITIVE_FAULT = 'pressure-not-positive';

export type PressureRole = 'inletPressure' | 'outletPressure';
const ROLES: readonly (readonly [PressureRole, 'p_in' | 'p_out'])[] = [
  ['inletPressure', 'p_in'],
  ['outletPressure', 'p_out'],
];

export interface GaugeAbsoluteJobOptions {
  /** Tick time [ms]: results up to and including it are judged and flagged. */
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
  /** Result rows that got a fault flag this run. */
  readonly flaggedRows: number;
  readonly notPositiveRows: number;
  readonly skipped: readonly GaugeAbsoluteSkip[];
}

interface ResultDb {
  t: number;
  p_in: number | null;
  p_out: number | null;
  t_in: number | null;
  t_out: number | null;
  running: boolean;
}

interface StoredFinding {
  id: number;
  at: number;
  ended_at: number | null;
  status: 'standing' | 'reverted' | 'dismissed';
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

function crossCheckOf(
  kind: MachineRow['kind'],
  role: PressureRole,
  f: GaugeAbsoluteFinding,
  cols: { t: Float64Array; pIn: Float64Array; pOut: Float64Array; TIn: Float64Array; TOut: Float64Array },
  valid: Uint8Array,
  ambient: number,
  windowPoints: number,
): { verdict: 'mix-up' | 'unexplained' | 'consistent' | 'not-checked'; detail: Record<string, unknown> } {
  if (kind === 'pump')
    return {
      verdict: 'not-checked',
      detail: { reason: 'pump: a liquid, the temperatures do not follow the pressure' },
    };
  if (kind === 'fan')
    return {
      verdict: 'not-checked',
      detail: { reason: 'fan: pressure ratio near 1, the exponent is ill-conditioned' },
    };
  let r: PressureRatioConsistency;
  try {
    r = pressureRatioConsistency({ ...cols, ambientPressure: ambient, valid }, f.at, { windowPoints });
  } catch (error) {
    if (!(error instanceof MonitorError)) throw error;
    return { verdict: 'not-checked', detail: { reason: error.message, code: error.code } };
  }
  const tag = role === 'inletPressure' ? 'inlet' : 'outlet';
  return {
    verdict: r.verdict,
    detail: {
      exponentBefore: r.exponentBefore,
      exponentAfter: r.exponentAfter,
      threshold: r.threshold,
      ...(r.mixUp === undefined
        ? {}
        : {
            mixUp: {
              tag: r.mixUp.tag,
              direction: r.mixUp.direction,
              exponentCorrected: r.mixUp.exponentCorrected,
            },
            // The machine pins the same tag and direction as the tag's own step.
            agrees: r.mixUp.tag === tag && r.mixUp.direction === f.direction,
          }),
    },
  };
}

async function readWindow(
  db: Queryable,
  machineId: number,
  fromMs: number,
  toMs: number,
): Promise<ResultDb[]> {
  const r = await db.query<ResultDb>(
    `SELECT (extract(epoch FROM time) * 1000)::float8 AS t, p_in, p_out, t_in, t_out,
            NOT ('not-running' = ANY(flags)) AS running
       FROM results
      WHERE machine_id = $1 AND ($2::float8 IS NULL OR time >= to_timestamp($2::float8 / 1000))
        AND time <= to_timestamp($3::float8 / 1000)
      ORDER BY time`,
    [machineId, Number.isFinite(fromMs) ? fromMs : null, toMs],
  );
  return r.rows;
}

/** Adds `fault:<name>:<role>` and valid = false to the rows of [fromMs, toMs) (toMs inclusive when `inclusiveEnd`) that lack it. */
async function flagRange(
  db: Queryable,
  machineId: number,
  flag: string,
  fromMs: number,
  toMs: number,
  inclusiveEnd: boolean,
): Promise<number> {
  const r = await db.query(
    `UPDATE results SET flags = array_append(flags, $2), valid = false
      WHERE machine_id = $1 AND time >= to_timestamp($3::float8 / 1000)
        AND (time < to_timestamp($4::float8 / 1000) OR ($5 AND time = to_timestamp($4::float8 / 1000)))
        AND NOT ($2 = ANY(flags))`,
    [machineId, flag, fromMs, toMs, inclusiveEnd],
  );
  return r.rowCount ?? 0;
}

interface MachineOutcome {
  standing: number;
  dismissed: number;
  reverted: number;
  flaggedRows: number;
  notPositiveRows: number;
  skip?: string;
}

async function machineStep(
  client: pg.PoolClient,
  row: MachineRow,
  o: Required<Omit<GaugeAbsoluteJobOptions, 'machineIds'>>,
): Promise<MachineOutcome> {
  const out: MachineOutcome = { standing: 0, dismissed: 0, reverted: 0, flaggedRows: 0, notPositiveRows: 0 };
  const fromMs = o.nowMs - o.windowMs;
  const ambient = await ambientOf(client, row, fromMs, o.nowMs);
  if (ambient === undefined)
    return { ...out, skip: 'no ambient pressure (site value or barometer readings)' };
  const rows = await readWindow(client, row.id, fromMs, o.nowMs);
  const n = rows.length;
  const t = new Float64Array(n);
  const pIn = new Float64Array(n);
  const pOut = new Float64Array(n);
  const TIn = new Float64Array(n);
  const TOut = new Float64Array(n);
  const running = new Uint8Array(n);
  const nan = (v: number | null): number => v ?? Number.NaN;
  rows.forEach((r, i) => {
    t[i] = r.t;
    pIn[i] = nan(r.p_in);
    pOut[i] = nan(r.p_out);
    TIn[i] = nan(r.t_in);
    TOut[i] = nan(r.t_out);
    running[i] = r.running ? 1 : 0;
  });
  const cols = { t, pIn, pOut, TIn, TOut };
  const tol = o.windowPoints * o.stepMs;

  for (const [role, column] of ROLES) {
    const tag = row.tags.find((x) => x.role === role);
    if (tag === undefined) continue;
    const p = column === 'p_in' ? pIn : pOut;
    const flag = `fault:${GAUGE_ABSOLUTE_FAULT}:${role}`;

    // Step 5: a reading at or below zero absolute, point by point.
    const notPositive: number[] = [];
    for (let i = 0; i < n; i++) {
      const v = p[i] as number;
      if (!Number.isFinite(v)) continue;
      const check = checkAbsolutePressurePlausible(v, { ambientPressure: ambient });
      if (!check.plausible && check.reason === 'not-positive') notPositive.push(t[i] as number);
    }
    if (notPositive.length > 0) {
      const r = await client.query(
        `UPDATE results SET flags = array_append(flags, $2), valid = false
          WHERE machine_id = $1 AND time = ANY(SELECT to_timestamp(x / 1000) FROM unnest($3::float8[]) AS x)
            AND NOT ($2 = ANY(flags))`,
        [row.id, `fault:${PRESSURE_NOT_POSITIVE_FAULT}:${role}`, notPositive],
      );
      out.notPositiveRows += r.rowCount ?? 0;
    }

    // Steps 1-3: the detector over the window, then the stored findings.
    const value = new Float64Array(n);
    for (let i = 0; i < n; i++) value[i] = running[i] === 1 ? (p[i] as number) : Number.NaN;
    const findings: GaugeAbsoluteFinding[] = [];
    for (const [a, b, spacing] of uniformStretches(t)) {
      // The detector's windows are counted in points: keep them near windowPoints minutes long
      // on a coarser grid (a history computed every 15 minutes), where slow process swings
      // would otherwise bend a window of 15 points (common practice, no source).
      const windowPoints = Math.max(
        4,
        Math.min(o.windowPoints, Math.round((o.windowPoints * o.stepMs) / spacing)),
      );
      if (b - a < 2 * windowPoints) continue;
      try {
        const found = detectGaugeAbsoluteStep(
          { t: t.subarray(a, b), value: value.subarray(a, b), ambientPressure: ambient },
          { windowPoints },
        );
        for (const f of found) findings.push({ ...f, index: f.index + a });
      } catch (error) {
        // Too few running points in the stretch: nothing new to find there this run.
        if (!(error instanceof MonitorError && error.code === 'MONITOR_TOO_FEW_POINTS')) throw error;
      }
    }
    const storedRes = await client.query<StoredFinding>(
      `SELECT id::int, (extract(epoch FROM at) * 1000)::float8 AS at,
              (extract(epoch FROM ended_at) * 1000)::float8 AS ended_at, status
         FROM instrument_findings WHERE machine_id = $1 AND role = $2 AND kind = $3 ORDER BY at FOR UPDATE`,
      [row.id, role, GAUGE_ABSOLUTE_FAULT],
    );
    const stored = storedRes.rows;
    const near = (a: number | null, b: number): boolean => a !== null && Math.abs(a - b) <= tol;
    for (const f of findings) {
      // Seen on an earlier run (as a step, or as the revert that ended one).
      if (stored.some((s) => near(s.at, f.at) || near(s.ended_at, f.at))) continue;
      if (f.revertsAt !== undefined) {
        const prior = stored.find((s) => near(s.at, f.revertsAt as number));
        // The return of a dismissed (real) change is real too: nothing to do.
        if (prior !== undefined && prior.status === 'dismissed') continue;
        if (prior !== undefined && prior.status === 'standing') {
          await client.query(
            `UPDATE instrument_findings SET status = 'reverted', ended_at = to_timestamp($2::float8 / 1000) WHERE id = $1`,
            [prior.id, f.at],
          );
          prior.status = 'reverted';
          prior.ended_at = f.at;
          out.reverted++;
          // The rows from the revert on were judged fine by the data: take the flag off them.
          await client.query(
            `UPDATE results SET flags = array_remove(flags, $2)
              WHERE machine_id = $1 AND time >= to_timestamp($3::float8 / 1000) AND $2 = ANY(flags)`,
            [row.id, flag, f.at],
          );
          continue;
        }
      }
      const check = crossCheckOf(row.kind, role, f, cols, running, ambient, o.windowPoints);
      const status = check.verdict === 'consistent' ? 'dismissed' : 'standing';
      const ins = await client.query<{ id: number }>(
        `INSERT INTO instrument_findings (machine_id, tag_id, role, kind, at, status, direction, likely_cause,
                                          shift_pa, shift_ambients, level_before_pa, level_after_pa, ambient_pa,
                                          cross_check, cross_check_detail)
         VALUES ($1, $2, $3, $4, to_timestamp($5::float8 / 1000), $6, $7, $8, $9, $10, $11, $12, $13, $14, $15)
         ON CONFLICT (machine_id, role, kind, at) DO NOTHING RETURNING id::int`,
        [
          row.id,
          tag.id,
          role,
          GAUGE_ABSOLUTE_FAULT,
          f.at,
          status,
          f.direction,
          f.likelyCause,
          f.shift,
          f.shiftInAmbients,
          f.levelBefore,
          f.levelAfter,
          ambient,
          check.verdict,
          JSON.stringify(check.detail),
        ],
      );
      const id = ins.rows[0]?.id;
      if (id === undefined) continue;
      stored.push({ id, at: f.at, ended_at: null, status });
      if (status === 'standing') out.standing++;
      else out.dismissed++;
    }

    // Step 4: flags from each standing step on, and over each reverted interval.
    for (const s of stored) {
      if (s.status === 'standing')
        out.flaggedRows += await flagRange(client, row.id, flag, s.at, o.nowMs, true);
      else if (s.status === 'reverted' && s.ended_at !== null)
        out.flaggedRows += await flagRange(client, row.id, flag, s.at, s.ended_at, false);
    }
  }
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
  let standing = 0;
  let dismissed = 0;
  let reverted = 0;
  let flaggedRows = 0;
  let notPositiveRows = 0;
  for (const row of machines) {
    if (row.outOfService) continue;
    const client = await pool.connect();
    try {
      await client.query('BEGIN');
      const r = await machineStep(client, row, o);
      await client.query('COMMIT');
      if (r.skip !== undefined) skipped.push({ machineId: row.id, reason: r.skip });
      standing += r.standing;
      dismissed += r.dismissed;
      reverted += r.reverted;
      flaggedRows += r.flaggedRows;
      notPositiveRows += r.notPositiveRows;
    } catch (error) {
      await client.query('ROLLBACK').catch(() => {});
      throw error;
    } finally {
      client.release();
    }
  }
  return { machines: machines.length, standing, dismissed, reverted, flaggedRows, notPositiveRows, skipped };
}

/**
 * [start, end, spacing] of the runs of equally spaced times (results on one grid) in t; two
 * neighbouring runs share their boundary point.
 */
export function uniformStretches(t: ArrayLike<number>): [number, number, number][] {
  const out: [number, number, number][] = [];
  let a = 0;
  while (a < t.length - 1) {
    const spacing = (t[a + 1] as number) - (t[a] as number);
    let b = a + 2;
    while (b < t.length && (t[b] as number) - (t[b - 1] as number) === spacing) b++;
    out.push([a, b, spacing]);
    a = b - 1;
  }
  return out;
}
