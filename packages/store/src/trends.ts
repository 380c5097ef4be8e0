/**
 * Downsampled trends: min, max, mean, last and count per bucket, so a single-sample spike
 * always shows in max or min whatever the zoom. Long ranges read the 1-minute or 1-hour
 * rollups, short ones raw samples; results series read the results table.
 */
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
}

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
 * Source for a bucket width: a rollup when at least 4 rollup buckets fall in each trend
 * bucket, so edge rounding (a rollup bucket counts where it starts) moves a point by at
 * most a quarter bucket; raw samples otherwise.
 */
export function trendSource(bucketMs: number): 'raw' | 'rollup_1m' | 'rollup_1h' {
  if (bucketMs >= 4 * HOUR_MS) return 'rollup_1h';
  if (bucketMs >= 4 * MINUTE_MS) return 'rollup_1m';
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

export async function readTrend(db: Queryable, request: TrendRequest): Promise<Trend> {
  const { series, from, to, buckets } = request;
  const span = to.getTime() - from.getTime();
  if (!Number.isInteger(buckets) || buckets < 1 || buckets > 100_000 || !(span > 0)) {
    throw new StoreError('STORE_BAD_REQUEST', `bad trend request: ${buckets} buckets over ${span} ms`, {
      buckets,
      from: from.toISOString(),
      to: to.toISOString(),
    });
  }
  const bucketMs = span / buckets;
  const bucketSeconds = bucketMs / 1000;
  // Bucket index of a time column, relative to `from`.
  const idx = (col: string): string => `floor(extract(epoch FROM ${col} - $2::timestamptz) / $4)::int`;
  let source: TrendSource;
  let sql: string;
  let key: number;
  if (series.kind === 'tag') {
    key = series.tagId;
    source = trendSource(bucketMs);
    if (source === 'raw') {
      sql = `SELECT ${idx('time')} AS b, min(value) AS min, max(value) AS max, avg(value) AS mean,
                    (array_agg(value ORDER BY time DESC))[1] AS last, max(time) AS last_time, count(*)::int AS count
               FROM samples WHERE tag_id = $1 AND time >= $2 AND time < $3 GROUP BY 1 ORDER BY 1`;
    } else {
      const table = source === 'rollup_1h' ? 'samples_1h' : 'samples_1m';
      sql = `SELECT ${idx('bucket')} AS b, min(min) AS min, max(max) AS max, sum(sum) / sum(count) AS mean,
                    (array_agg(last_value ORDER BY last_time DESC))[1] AS last, max(last_time) AS last_time,
                    sum(count)::int AS count
               FROM ${table} WHERE tag_id = $1 AND bucket >= $2 AND bucket < $3 GROUP BY 1 ORDER BY 1`;
    }
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
    sql = `SELECT ${idx('time')} AS b, min(${column}) AS min, max(${column}) AS max, avg(${column}) AS mean,
                  (array_agg(${column} ORDER BY time DESC))[1] AS last, max(time) AS last_time, count(*)::int AS count
             FROM results WHERE machine_id = $1 AND time >= $2 AND time < $3 AND ${column} IS NOT NULL ${valid}
            GROUP BY 1 ORDER BY 1`;
  }
  const res = await db.query<Row>(sql, [key, from.toISOString(), to.toISOString(), bucketSeconds]);
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
