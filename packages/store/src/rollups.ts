/**
 * 1-minute and 1-hour rollups of samples.
 *
 * The sample writer keeps them incrementally: inside the batch's transaction, under
 * per-tag advisory locks, the rows that were really new (all rows of a batch COPY'd
 * straight into samples, or the RETURNING rows of the staging path's ON CONFLICT DO
 * NOTHING) are aggregated per bucket and merged into the stored buckets: min of mins, max
 * of maxes, sum of sums, count of counts, and the later of the two "last" points. Only new
 * rows are ever added, so a re-sent batch changes nothing, and no batch re-reads samples.
 * rebuildRollups (rollup-rebuild.ts) recomputes a range from the raw samples, for repair.
 */
import { RollupEncoder, type RollupRow, type SampleRow } from './copy-binary.js';
import type { Queryable } from './errors.js';
import { sqlFloat, sqlTime } from './sql-literals.js';

export const MINUTE_MS = 60_000;
export const HOUR_MS = 3_600_000;

/** Distinct (tag, bucket start) pairs, as parallel arrays for unnest. */
export interface TouchedBuckets {
  readonly tagIds: number[];
  readonly starts: string[];
}

/** Buckets of width [ms] touched by the given (tag, time [ms]) pairs. */
export function touchedBuckets(
  tagIds: readonly number[],
  times: readonly number[],
  widthMs: number,
): TouchedBuckets {
  const seen = new Set<string>();
  const out: TouchedBuckets = { tagIds: [], starts: [] };
  for (let i = 0; i < tagIds.length; i++) {
    const start = Math.floor(times[i]! / widthMs) * widthMs;
    const key = `${tagIds[i]}:${start}`;
    if (seen.has(key)) continue;
    seen.add(key);
    out.tagIds.push(tagIds[i]!);
    out.starts.push(new Date(start).toISOString());
  }
  return out;
}

const UPSERT = `ON CONFLICT (tag_id, bucket) DO UPDATE SET min = excluded.min, max = excluded.max, sum = excluded.sum,
  count = excluded.count, last_value = excluded.last_value, last_time = excluded.last_time`;

/**
 * Recomputes samples_1m over the given minute buckets from raw samples. Not used by the
 * writer any more (its per-bucket join re-read samples and grew with the table); kept for
 * callers that name single buckets. For ranges use rebuildRollups.
 */
export async function refreshMinuteRollups(db: Queryable, touched: TouchedBuckets): Promise<void> {
  if (touched.tagIds.length === 0) return;
  await db.query(
    `INSERT INTO samples_1m (tag_id, bucket, min, max, sum, count, last_value, last_time)
     SELECT s.tag_id, r.bucket, min(s.value), max(s.value), sum(s.value), count(*)::int,
            (array_agg(s.value ORDER BY s.time DESC))[1], max(s.time)
       FROM unnest($1::int[], $2::timestamptz[]) AS r(tag_id, bucket)
       JOIN samples s ON s.tag_id = r.tag_id AND s.time >= r.bucket AND s.time < r.bucket + interval '1 minute'
      GROUP BY s.tag_id, r.bucket
     ${UPSERT}`,
    [touched.tagIds, touched.starts],
  );
}

/** Recomputes samples_1h over the given hour buckets from samples_1m. */
export async function refreshHourRollups(db: Queryable, touched: TouchedBuckets): Promise<void> {
  if (touched.tagIds.length === 0) return;
  await db.query(
    `INSERT INTO samples_1h (tag_id, bucket, min, max, sum, count, last_value, last_time)
     SELECT m.tag_id, r.bucket, min(m.min), max(m.max), sum(m.sum), sum(m.count)::int,
            (array_agg(m.last_value ORDER BY m.last_time DESC))[1], max(m.last_time)
       FROM unnest($1::int[], $2::timestamptz[]) AS r(tag_id, bucket)
       JOIN samples_1m m ON m.tag_id = r.tag_id AND m.bucket >= r.bucket AND m.bucket < r.bucket + interval '1 hour'
      GROUP BY m.tag_id, r.bucket
     ${UPSERT}`,
    [touched.tagIds, touched.starts],
  );
}

/**
 * Per-bucket aggregates of a batch sorted by (tag, time), for both widths, straight into
 * binary COPY data for rollup_stage (minute rows, then hour rows). Each bucket's rows are
 * contiguous in that order, so one pass per width suffices and no bucket appears twice.
 */
export function encodeBatchRollups(rows: readonly SampleRow[]): Buffer {
  const out = new RollupEncoder(2 * rows.length);
  aggregateInto(rows, MINUTE_MS, false, out);
  aggregateInto(rows, HOUR_MS, true, out);
  return out.finish();
}

/** A batch's rollup rows split for the fast path (see splitBatchRollups). */
export interface SplitRollups {
  /** First minute and first hour bucket of each tag, to merge (mergeRollupRowsSql). */
  readonly head: readonly RollupRow[];
  /** Later minute buckets, in samples_1m's columns, and how many. */
  readonly minutes: Buffer;
  readonly minuteRows: number;
  /** Later hour buckets, in samples_1h's columns, and how many. */
  readonly hours: Buffer;
  readonly hourRows: number;
}

/**
 * The batch's rollup rows, split by whether a stored bucket can share their key. When every
 * row of the batch is newer than the tag's last stored time (the fast path), only each
 * tag's first minute and first hour can already be stored; the later buckets are new and
 * go straight in by COPY, which inserts in bulk where an upsert goes row by row.
 */
export function splitBatchRollups(rows: readonly SampleRow[]): SplitRollups {
  const head: RollupRow[] = [];
  const minutes = new RollupEncoder(rows.length, false);
  const hours = new RollupEncoder(rows.length, false);
  aggregateInto(rows, MINUTE_MS, false, minutes, rowSink(head));
  aggregateInto(rows, HOUR_MS, true, hours, rowSink(head));
  return {
    head,
    minutes: minutes.finish(),
    minuteRows: minutes.rows,
    hours: hours.finish(),
    hourRows: hours.rows,
  };
}

/** The same aggregates as rows (for tests and tools). */
export function aggregateSortedBatch(rows: readonly SampleRow[]): RollupRow[] {
  const out: RollupRow[] = [];
  const sink = rowSink(out);
  aggregateInto(rows, MINUTE_MS, false, sink);
  aggregateInto(rows, HOUR_MS, true, sink);
  return out;
}

/** An aggregateInto sink that collects RollupRow objects into `out`. */
function rowSink(out: RollupRow[]): Pick<RollupEncoder, 'addFields'> {
  return {
    addFields(
      tagId: number,
      bucket: number,
      min: number,
      max: number,
      sum: number,
      count: number,
      lastValue: number,
      lastTime: number,
      hourly: boolean,
    ): void {
      out.push({ tagId, bucket, min, max, sum, count, lastValue, lastTime, hourly });
    },
  };
}

/** Aggregates per (tag, bucket of `width`) into `out`; each tag's first bucket into `first` when given. */
function aggregateInto(
  rows: readonly SampleRow[],
  width: number,
  hourly: boolean,
  out: Pick<RollupEncoder, 'addFields'>,
  first: Pick<RollupEncoder, 'addFields'> = out,
): void {
  let sink = first;
  let tag = -1;
  let bucket = Number.NaN;
  let min = 0;
  let max = 0;
  let sum = 0;
  let count = 0;
  let lastValue = 0;
  let lastTime = 0;
  for (let i = 0; i < rows.length; i++) {
    const r = rows[i]!;
    const t = r.time;
    const v = r.value;
    const b = t - (((t % width) + width) % width);
    if (r.tagId !== tag || b !== bucket) {
      if (count > 0) sink.addFields(tag, bucket, min, max, sum, count, lastValue, lastTime, hourly);
      sink = r.tagId !== tag ? first : out;
      tag = r.tagId;
      bucket = b;
      min = v;
      max = v;
      sum = 0;
      count = 0;
    }
    if (v < min) min = v;
    if (v > max) max = v;
    sum += v;
    count++;
    lastValue = v;
    lastTime = t;
  }
  if (count > 0) sink.addFields(tag, bucket, min, max, sum, count, lastValue, lastTime, hourly);
}

/** Temporary table of a session that receives a batch's rollup rows (binary COPY). */
export const ROLLUP_STAGE_DDL = `CREATE TEMP TABLE IF NOT EXISTS rollup_stage
  (tag_id integer, bucket timestamptz, min double precision, max double precision, sum double precision,
   count integer, last_value double precision, last_time timestamptz, hourly boolean) ON COMMIT DELETE ROWS`;

/**
 * Merge of new rows' aggregates into a stored bucket. The new rows never share a time
 * with stored ones (the key is (tag_id, time)), so "later last_time wins" is exact.
 */
function mergeClause(table: 'samples_1m' | 'samples_1h'): string {
  return `ON CONFLICT (tag_id, bucket) DO UPDATE SET
    min = least(${table}.min, excluded.min), max = greatest(${table}.max, excluded.max),
    sum = ${table}.sum + excluded.sum, count = ${table}.count + excluded.count,
    last_value = CASE WHEN excluded.last_time > ${table}.last_time THEN excluded.last_value ELSE ${table}.last_value END,
    last_time = greatest(${table}.last_time, excluded.last_time)`;
}

/** The rollup tables' columns, in order. */
export const ROLLUP_COLUMNS_SQL = 'tag_id, bucket, min, max, sum, count, last_value, last_time';
const COLUMNS = ROLLUP_COLUMNS_SQL;

/** Binary COPY of rollup rows (RollupEncoder, encodeBatchRollups) into rollup_stage. */
export const COPY_ROLLUP_STAGE =
  'COPY rollup_stage (tag_id, bucket, min, max, sum, count, last_value, last_time, hourly) FROM STDIN (FORMAT binary)';

/**
 * Statements merging a few rollup rows (the fast path's first bucket of each tag) into
 * samples_1m and samples_1h, as literals, so they ride in the batch's last round trip
 * (see sql-literals.ts); '' when there are none.
 */
export function mergeRollupRowsSql(rows: readonly RollupRow[]): string {
  const statements: string[] = [];
  for (const hourly of [false, true]) {
    const values = rows
      .filter((r) => r.hourly === hourly)
      .map(
        (r) =>
          `(${r.tagId}, ${sqlTime(r.bucket)}, ${sqlFloat(r.min)}, ${sqlFloat(r.max)}, ${sqlFloat(r.sum)}, ${r.count}, ${sqlFloat(r.lastValue)}, ${sqlTime(r.lastTime)})`,
      );
    const table = hourly ? 'samples_1h' : 'samples_1m';
    if (values.length > 0)
      statements.push(`INSERT INTO ${table} (${COLUMNS}) VALUES ${values.join(', ')} ${mergeClause(table)};`);
  }
  return statements.join('\n');
}

/** Merges the rows of rollup_stage into samples_1m and samples_1h (one statement). */
export const MERGE_ROLLUP_STAGE = `WITH m AS (
    INSERT INTO samples_1m (${COLUMNS}) SELECT ${COLUMNS} FROM rollup_stage WHERE NOT hourly
    ${mergeClause('samples_1m')})
  INSERT INTO samples_1h (${COLUMNS}) SELECT ${COLUMNS} FROM rollup_stage WHERE hourly
    ${mergeClause('samples_1h')}`;

/**
 * Every row of samples_stage, with the stored value and quality of its key (null when the
 * key is new). The subquery is fenced (OFFSET 0) so each staged row probes the primary key:
 * the staging table has no statistics, and a hash or merge join would read whole
 * partitions of samples.
 */
const STAGED_WITH_STORED = `old AS (
    SELECT s.tag_id, s.time, s.value, s.quality, p.value AS stored_value, p.quality AS stored_quality
      FROM samples_stage s
      LEFT JOIN LATERAL (SELECT value, quality FROM samples p WHERE p.tag_id = s.tag_id AND p.time = s.time OFFSET 0) p
        ON true)`;

/** Columns of the staging statement's one result row. */
export interface StagedResult {
  /** Rows inserted. */
  readonly n: number;
  /** Conflicting keys (another value bit for bit, or another quality), parallel arrays. */
  readonly tag_ids: number[];
  /** [ms since epoch] */
  readonly times: number[];
  readonly stored_values: number[];
  readonly stored_qualities: number[];
  /** The inserted keys (parallel arrays), when asked for (insertStagedSql's `namesInserted`). */
  readonly ins_tag_ids?: number[];
  /** [ms since epoch] */
  readonly ins_times?: number[];
}

/**
 * Staging path: inserts the rows of samples_stage whose key is new, merges the rows really
 * inserted into both rollups, and returns the staged keys stored with another value or
 * quality, all in one statement. Every part of a statement sees the same snapshot, so `old`
 * holds what was stored before this insert, never its own rows; ON CONFLICT DO NOTHING
 * still guards a key stored meanwhile around the writer. The rows go in the order they were
 * staged (the writer stages them sorted by key), so no sort. float8send compares values bit
 * for bit (= holds -0 equal to 0). Buckets are cut by date_bin from 2000-01-01 UTC so the
 * session's TimeZone cannot shift an hour bucket. With `namesInserted` it also returns the
 * inserted keys, so the writer can name the rest (neither inserted nor conflicting) as
 * duplicates: a re-sent batch inserts nothing, so for it that costs nothing.
 */
export function insertStagedSql(rollups: boolean, namesInserted = false): string {
  const insert = `INSERT INTO samples (tag_id, time, value, quality)
      SELECT tag_id, time, value, quality FROM old WHERE stored_quality IS NULL
      ON CONFLICT DO NOTHING RETURNING tag_id, time, value`;
  const agg = (
    width: string,
  ): string => `SELECT tag_id, date_bin(interval '${width}', time, timestamptz '2000-01-01 00:00+00'),
         min(value), max(value), sum(value), count(*)::int, (array_agg(value ORDER BY time DESC))[1], max(time)
      FROM ins GROUP BY 1, 2`;
  const merges = rollups
    ? `, m AS (INSERT INTO samples_1m (${COLUMNS}) ${agg('1 minute')} ${mergeClause('samples_1m')}),
    h AS (INSERT INTO samples_1h (${COLUMNS}) ${agg('1 hour')} ${mergeClause('samples_1h')})`
    : '';
  const inserted = namesInserted
    ? `,
           (SELECT coalesce(array_agg(tag_id), '{}') FROM ins) AS ins_tag_ids,
           (SELECT coalesce(array_agg((extract(epoch FROM time) * 1000)::float8), '{}') FROM ins) AS ins_times`
    : '';
  return `WITH ${STAGED_WITH_STORED}, ins AS (${insert})${merges}
    SELECT (SELECT count(*)::int FROM ins) AS n,
           coalesce(array_agg(tag_id), '{}') AS tag_ids,
           coalesce(array_agg((extract(epoch FROM time) * 1000)::float8), '{}') AS times,
           coalesce(array_agg(stored_value), '{}') AS stored_values,
           coalesce(array_agg(stored_quality), '{}') AS stored_qualities${inserted}
      FROM old WHERE stored_quality IS NOT NULL
       AND (float8send(value) <> float8send(stored_value) OR quality <> stored_quality)`;
}

/** Advisory-lock class for per-tag write locks, shared with the sample writer. */
export const TAG_LOCK_CLASS = 0x15e7;
