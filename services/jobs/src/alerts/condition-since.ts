/**
 * When an alert's condition began ("condition since", beside "raised" in its evidence and
 * message). The band judges only from where the alert job last stopped (at most its catch-up span
 * back), so an alert raised on history, on a first start or after a stop of the jobs, meets a
 * condition that already held: the band's own onset would date it to the run. The history says
 * when it began:
 *  - drift: the first UTC day of the unbroken run of daily mean drifts beyond the level, ending
 *    with the last day before the day of the band's onset (the daily means of the analysis job,
 *    over steady, valid, fault-free results). Days with too few usable results neither extend nor
 *    break the run. When the day before is not beyond, the band's onset stands;
 *  - instrument fault: the first time of the instrument finding behind it (a gauge/absolute step,
 *    migrations/0005), or of the unbroken run of results carrying a fault of the alert's key,
 *    whichever is earlier, and never later than the band's onset.
 */
import type { BandState, Severity } from '@isentrope/monitor';
import type { Queryable } from '@isentrope/store';
import { dailyDriftMeans } from '../analysis/job.js';
import { isoSeconds } from './times.js';

const DAY_MS = 86_400_000;
/** First look-back of the daily drift search; doubled each time the run fills it. */
const FIRST_SPAN_MS = 16 * DAY_MS;

export interface ConditionSince {
  /** [ms] */
  readonly ms: number;
  /** How it was found, for the evidence. */
  readonly basis: string;
}

const RANK: Readonly<Record<Severity, number>> = { normal: 0, warning: 1, alarm: 2 };

/**
 * The time the band first asked for the severity it has just entered at `t` [ms]: the start of the
 * delay it waited out (the pending state before the step, same rule as stepBand), else `t`.
 */
export function bandOnsetMs(before: BandState, to: Severity, t: number): number {
  const p = before.pending;
  const rising = RANK[to] > RANK[before.severity];
  return p !== undefined && RANK[p.severity] > RANK[before.severity] === rising ? p.sinceMs : t;
}

/**
 * Start [ms] of the earliest day of the unbroken run of days whose mean drift lies below
 * `levelPts` (a loss beyond the level) and that ends with the last day given; undefined when the
 * last day is not beyond. Days in time order, `dayStartMs` their starts.
 */
export function runStartOfDays(
  dayStartMs: readonly number[],
  driftPts: readonly number[],
  levelPts: number,
): number | undefined {
  let start: number | undefined;
  for (let i = dayStartMs.length - 1; i >= 0; i--) {
    if (!((driftPts[i] ?? Number.NaN) < levelPts)) break;
    start = dayStartMs[i];
  }
  return start;
}

async function firstResultMs(db: Queryable, machineId: number): Promise<number | undefined> {
  const r = await db.query<{ t: number | null }>(
    `SELECT (extract(epoch FROM min(time)) * 1000)::float8 AS t FROM results WHERE machine_id = $1`,
    [machineId],
  );
  return r.rows[0]?.t ?? undefined;
}

/**
 * Condition since of a drift alert entering the level `levelPts` [%-points, negative] whose band
 * onset is `onsetMs`. The days are read backwards in growing spans, so a run of a week costs one
 * short query and a run of a year a handful.
 */
export async function driftConditionSince(
  db: Queryable,
  machineId: number,
  levelPts: number,
  onsetMs: number,
  minPointsPerDay: number,
): Promise<ConditionSince> {
  const onsetDay = Math.floor(onsetMs / DAY_MS) * DAY_MS;
  const first = await firstResultMs(db, machineId);
  const firstDay = first === undefined ? onsetDay : Math.floor(first / DAY_MS) * DAY_MS;
  let start: number | undefined;
  let to = onsetDay;
  let span = FIRST_SPAN_MS;
  while (to > firstDay) {
    const from = Math.max(to - span, firstDay);
    const days = await dailyDriftMeans(db, machineId, from, to, minPointsPerDay);
    const dayStarts = days.t.map((t) => t - DAY_MS / 2);
    const s = runStartOfDays(dayStarts, days.driftPts, levelPts);
    if (dayStarts.length > 0) {
      if (s === undefined) break; // the newest day with data here is inside the level: the run ends
      start = s;
      if (s !== dayStarts[0]) break; // broken inside this span
    }
    to = from;
    span *= 2;
  }
  if (start === undefined)
    return {
      ms: onsetMs,
      basis: `the hourly mean drift first beyond ${levelPts} points (start of the on-delay); the day before was not beyond it`,
    };
  return {
    ms: start,
    basis: `first UTC day of the unbroken run of daily mean drifts beyond ${levelPts} points up to the alert (days with fewer than ${minPointsPerDay} usable results neither extend nor break it)`,
  };
}

/** Roles a fault flag of an alert key carries (`fault:<name>:<role>`; none or 'machine' for the machine). */
function rolesOfKey(key: string): string[] {
  const role = key.slice('instrument:'.length);
  return role === 'machine' ? ['', 'machine'] : [role];
}

/** A result's flags hold a fault of one of the roles $2 (the SQL side of faultsByKey, ./config.ts). */
const HAS_KEY_FAULT = (flags: string): string =>
  `EXISTS (SELECT 1 FROM unnest(${flags}) AS f(flag)
            WHERE f.flag LIKE 'fault:%' AND regexp_replace(f.flag, '^fault:[^:]*:?', '') = ANY($2::text[]))`;

/** First result [ms] of the unbroken run of results with a fault of the key, up to `atMs`. */
async function flaggedRunStartMs(
  db: Queryable,
  machineId: number,
  key: string,
  atMs: number,
): Promise<number | undefined> {
  const r = await db.query<{ t: number | null }>(
    `WITH clean AS (
       SELECT max(time) AS t FROM results
        WHERE machine_id = $1 AND time < to_timestamp($3::float8 / 1000) AND NOT ${HAS_KEY_FAULT('flags')})
     SELECT (extract(epoch FROM min(r.time)) * 1000)::float8 AS t FROM results r, clean
      WHERE r.machine_id = $1 AND r.time <= to_timestamp($3::float8 / 1000)
        AND (clean.t IS NULL OR r.time > clean.t) AND ${HAS_KEY_FAULT('r.flags')}`,
    [machineId, rolesOfKey(key), atMs],
  );
  return r.rows[0]?.t ?? undefined;
}

/** The gauge/absolute finding standing at `atMs` on the key's role, if any. */
async function findingAt(
  db: Queryable,
  machineId: number,
  key: string,
  atMs: number,
): Promise<{ id: number; ms: number } | undefined> {
  const r = await db.query<{ id: number; t: number }>(
    `SELECT id::int, (extract(epoch FROM at) * 1000)::float8 AS t FROM instrument_findings
      WHERE machine_id = $1 AND role = ANY($2::text[]) AND status IN ('standing', 'reverted')
        AND at <= to_timestamp($3::float8 / 1000)
        AND (ended_at IS NULL OR ended_at > to_timestamp($3::float8 / 1000))
      ORDER BY at DESC LIMIT 1`,
    [machineId, rolesOfKey(key), atMs],
  );
  const row = r.rows[0];
  return row === undefined ? undefined : { id: row.id, ms: row.t };
}

/**
 * Condition since of an instrument alert of `key` ('instrument:<role>') raised at `atMs` whose
 * band onset (first faulty result it judged) is `onsetMs`.
 */
export async function instrumentConditionSince(
  db: Queryable,
  machineId: number,
  key: string,
  onsetMs: number,
  atMs: number,
): Promise<ConditionSince> {
  const finding = await findingAt(db, machineId, key, atMs);
  const run = await flaggedRunStartMs(db, machineId, key, onsetMs);
  if (finding !== undefined && finding.ms <= (run ?? onsetMs) && finding.ms <= onsetMs)
    return {
      ms: finding.ms,
      basis: `instrument finding ${finding.id} (gauge/absolute step): first result at the new level, ${isoSeconds(finding.ms)}`,
    };
  if (run !== undefined && run <= onsetMs)
    return {
      ms: run,
      basis: 'first result of the unbroken run of results flagged with a fault of this instrument',
    };
  return { ms: onsetMs, basis: 'first faulty result the alert job judged (start of the on-delay)' };
}
