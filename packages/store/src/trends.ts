/**
 * Downsampled trends: min, max, mean, last and count per bucket, so a single-sample spike
 * always shows in max or min whatever the zoom. Long ranges read the 1-hour rollup; shorter
 * ones raw samples while the raw row count stays small (estimated from the hourly rollup),
 * else the 1-minute rollup; results series read the results table.
 *
 * No sort per bucket: each query aggregates min, max, sum, count and the latest time (or
 * latest rollup bucket) per trend bucket, then fetches the "last" value by primary key,
 * one index probe per trend bucket. The probe is a LATERAL subquery with LIMIT 1 so the
 * planner cannot flatten it into a hash join over every row of the tag (it did, when it
 * guessed one group per raw row). Bucket indexes are computed in float8 seconds
 * (date_part), not with extract(), which returns numeric since PostgreSQL 14.
 */
import type pg from 'pg';
import { bucketSeries } from './blocks/aggregate.js';
import { readSeries } from './blocks/read.js';
import { type Queryable, StoreError } from './errors.js';
import { HOUR_MS, MINUTE_MS } from './rollups.js';

export type TrendSeries =
  | { readonly kind: 'tag'; readonly tagId: number }
  | {
      readonly kind: 'result';
      readonly machineId: number;
      readonly field: ResultField;
      readonly validOnly?: boolean;
    };

/** Numeric results columns a trend may show (camelCase name -> column). */
export const RESULT_FIELDS = {
  efficiency: 'efficiency',
  uEfficiency: 'u_efficiency',
  polytropicEfficiency: 'polytropic_efficiency',
  specificWork: 'specific_work',
  power: 'power',
  entropyGeneration: 'entropy_generation',
  operatingPoint: 'operating_point',
  massFlow: 'mass_flow',
  pIn: 'p_in',
  tIn: 't_in',
  pOut: 'p_out',
  tOut: 't_out',
} as const;
export type ResultField = keyof typeof RESULT_FIELDS;

export interface TrendRequest {
  readonly series: TrendSeries;
  readonly from: Date;
  readonly to: Date;
  /** Number of equal buckets over [from, to). */
  readonly buckets: number;
  /**
   * Raw samples are read only while the estimated raw row count of the range stays below
   * this (default RAW_ROW_LIMIT); above it a rollup answers (see chooseTagSource).
   */
  readonly rawRowLimit?: number;
}

/** Default raw row budget of one trend query (about 30 ms of aggregation on PostgreSQL 15). */
export const RAW_ROW_LIMIT = 200_000;

export interface TrendBucket {
  /** Bucket index 0..buckets-1 and its start. */
  readonly index: number;
  readonly start: Date;
  readonly min: number;
  readonly max: number;
  readonly mean: number;
  readonly last: number;
  readonly lastTime: Date;
  readonly count: number;
}

export type TrendSource = 'raw' | 'rollup_1m' | 'rollup_1h' | 'results';

export interface Trend {
  readonly source: TrendSource;
  /** Bucket width [s]. */
  readonly bucketSeconds: number;
  /** Only buckets holding data, in time order; a gap is a missing index. */
  readonly buckets: TrendBucket[];
}

/**
 * Source for a bucket width when the raw row count is not a concern: a rollup when at
 * least 4 rollup buckets fall in each trend bucket, so edge rounding (a rollup bucket
 * counts where it starts) moves a point by at most a quarter bucket; raw samples otherwise.
 */
export function trendSource(bucketMs: number): 'raw' | 'rollup_1m' | 'rollup_1h' {
  if (bucketMs >= 4 * HOUR_MS) return 'rollup_1h';
  if (bucketMs >= 4 * MINUTE_MS) return 'rollup_1m';
  return 'raw';
}

/**
 * Source for a tag trend: the hourly rollup for wide buckets (>= 4 h); raw samples while
 * the range holds fewer than `rawRowLimit` rows (exact, and cheap); else the 1-minute
 * rollup when a trend bucket is at least one minute wide; raw samples again for finer
 * buckets, where no rollup can answer. `estimatedRows` comes from the hourly rollup (0
 * when rollups are not kept, which then falls back to raw samples, the honest source).
 */
export function chooseTagSource(
  bucketMs: number,
  estimatedRows: number,
  rawRowLimit: number = RAW_ROW_LIMIT,
): 'raw' | 'rollup_1m' | 'rollup_1h' {
  if (bucketMs >= 4 * HOUR_MS) return 'rollup_1h';
  if (estimatedRows < rawRowLimit) return 'raw';
  if (bucketMs >= MINUTE_MS) return 'rollup_1m';
  return 'raw';
}

interface Row {
  b: number;
  min: number;
  max: number;
  mean: number;
  last: number;
  last_time: Date;
  count: number;
}

/**
 * SQL of one trend: $1 key, $2/$3 range, $4 bucket width [s], $5 range start [s since
 * epoch]. `latest` is the column whose maximum per bucket names the row holding "last".
 */
function trendSql(o: {
  table: string;
  keyColumn: string;
  timeColumn: string;
  aggregates: string;
  latest: string;
  lastValue: string;
  lastTime: string;
  filter?: string;
}): string {
  const filter = o.filter ?? '';
  return `WITH g AS (
      SELECT floor((date_part('epoch', ${o.timeColumn}) - $5::float8) / $4::float8)::int AS b, ${o.aggregates},
             max(${o.latest}) AS latest
        FROM ${o.table}
       WHERE ${o.keyColumn} = $1 AND ${o.timeColumn} >= $2 AND ${o.timeColumn} < $3 ${filter}
       GROUP BY 1)
    SELECT g.b, g.min, g.max, g.mean, g.count, r.last, r.last_time
      FROM g CROSS JOIN LATERAL (
        SELECT ${o.lastValue} AS last, ${o.lastTime} AS last_time FROM ${o.table}
         WHERE ${o.keyColumn} = $1 AND ${o.timeColumn} = g.latest LIMIT 1) r
     ORDER BY g.b`;
}

const ROLLUP_AGGREGATES =
  'min(min) AS min, max(max) AS max, sum(sum) / sum(count) AS mean, sum(count)::int AS count';

/** Raw rows of a tag in [from, to) as the hourly rollup counts them (whole hours around the range). */
async function estimateRawRows(db: Queryable, tagId: number, from: Date, to: Date): Promise<number> {
  const res = await db.query<{ n: string | null }>(
    `SELECT sum(count)::text AS n FROM samples_1h
      WHERE tag_id = $1 AND bucket >= date_bin(interval '1 hour', $2::timestamptz, timestamptz '2000-01-01 00:00+00') AND bucket < $3`,
    [tagId, from.toISOString(), to.toISOString()],
  );
  return Number(res.rows[0]?.n ?? 0);
}

/**
 * Raw trend from readSeries (hot rows and decoded blocks alike), bucketed as the SQL of the
 * other sources: index floor((t [s] - from [s]) / width [s]) in float8, mean summed in time order.
 */
async function rawTrend(
  db: pg.Pool | pg.ClientBase,
  tagId: number,
  from: Date,
  to: Date,
  bucketMs: number,
): Promise<TrendBucket[]> {
  const series = (await readSeries(db, [tagId], from.getTime(), to.getTime())).get(tagId);
  if (series === undefined) return [];
  const fromS = from.getTime() / 1000;
  const widthS = bucketMs / 1000;
  return bucketSeries(series, (ms) => Math.floor((ms / 1000 - fromS) / widthS)).map((b) => ({
    index: b.index,
    start: new Date(from.getTime() + b.index * bucketMs),
    min: b.min,
    max: b.max,
    mean: b.sum / b.count,
    last: b.last,
    lastTime: new Date(b.lastTime),
    count: b.count,
  }));
}

export async function readTrend(db: pg.Pool | pg.ClientBase, request: TrendRequest): Promise<Trend> {
  const { series, from, to, buckets } = request;
  const span = to.getTime() - from.getTime();
  const rawRowLimit = request.rawRowLimit ?? RAW_ROW_LIMIT;
  if (!Number.isInteger(buckets) || buckets < 1 || buckets > 100_000 || !(span > 0) || !(rawRowLimit >= 0)) {
    throw new StoreError('STORE_BAD_REQUEST', `bad trend request: ${buckets} buckets over ${span} ms`, {
      buckets,
      from: from.toISOString(),
      to: to.toISOString(),
      rawRowLimit,
    });
  }
  const bucketMs = span / buckets;
  const bucketSeconds = bucketMs / 1000;
  let source: TrendSource;
  let sql: string;
  let key: number;
  if (series.kind === 'tag') {
    key = series.tagId;
    source =
      bucketMs >= 4 * HOUR_MS
        ? 'rollup_1h'
        : chooseTagSource(bucketMs, await estimateRawRows(db, key, from, to), rawRowLimit);
    if (source === 'raw')
      return { source, bucketSeconds, buckets: await rawTrend(db, key, from, to, bucketMs) };
    sql = trendSql({
      table: source === 'rollup_1h' ? 'samples_1h' : 'samples_1m',
      keyColumn: 'tag_id',
      timeColumn: 'bucket',
      aggregates: ROLLUP_AGGREGATES,
      // Rollup buckets do not overlap, so the latest bucket holds the latest sample.
      latest: 'bucket',
      lastValue: 'last_value',
      lastTime: 'last_time',
    });
  } else {
    const column = RESULT_FIELDS[series.field];
    if (column === undefined) {
      throw new StoreError('STORE_BAD_REQUEST', `unknown results field "${series.field}"`, {
        field: series.field,
        accepted: Object.keys(RESULT_FIELDS),
      });
    }
    key = series.machineId;
    source = 'results';
    const valid = (series.validOnly ?? true) ? 'AND valid' : '';
    sql = trendSql({
      table: 'results',
      keyColumn: 'machine_id',
      timeColumn: 'time',
      aggregates: `min(${column}) AS min, max(${column}) AS max, avg(${column}) AS mean, count(*)::int AS count`,
      latest: 'time',
      lastValue: column,
      lastTime: 'time',
      filter: `AND ${column} IS NOT NULL ${valid}`,
    });
  }
  const res = await db.query<Row>(sql, [
    key,
    from.toISOString(),
    to.toISOString(),
    bucketSeconds,
    from.getTime() / 1000,
  ]);
  return {
    source,
    bucketSeconds,
    buckets: res.rows.map((r) => ({
      index: r.b,
      start: new Date(from.getTime() + r.b * bucketMs),
      min: r.min,
      max: r.max,
      mean: r.mean,
      last: r.last,
      lastTime: r.last_time,
      count: r.count,
    })),
  };
}
