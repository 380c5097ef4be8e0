import type pg from 'pg';

export interface SampleRow {
  time: Date;
  value: number;
  quality: number;
}

/** Raw samples of a tag in [from, to), oldest first, keyset-paginated on time. */
export async function listSamples(
  pool: pg.Pool,
  tagId: number,
  fromMs: number,
  toMs: number,
  limit: number,
  afterMs: number | undefined,
): Promise<SampleRow[]> {
  const { rows } = await pool.query<SampleRow>(
    `SELECT time, value, quality FROM samples
      WHERE tag_id = $1 AND time >= $2 AND time < $3 AND ($4::timestamptz IS NULL OR time > $4)
      ORDER BY time LIMIT $5`,
    [tagId, new Date(fromMs), new Date(toMs), afterMs === undefined ? null : new Date(afterMs), limit],
  );
  return rows;
}

export interface SampleBucket {
  t: number;
  min: number;
  max: number;
  mean: number;
  count: number;
}

/** Source of a tag trend: raw for spans up to 2 days, minute rollups up to 60 days, hourly beyond (keeps any answer to a few thousand rows per bucket set). */
export function trendSource(spanMs: number): 'samples' | 'samples_1m' | 'samples_1h' {
  if (spanMs <= 2 * 86_400_000) return 'samples';
  if (spanMs <= 60 * 86_400_000) return 'samples_1m';
  return 'samples_1h';
}

/** Downsampled samples: min, max, mean and count per bucket, from the raw table or a rollup. */
export async function sampleTrend(
  pool: pg.Pool,
  tagId: number,
  fromMs: number,
  toMs: number,
  buckets: number,
): Promise<{ widthMs: number; source: string; buckets: SampleBucket[] }> {
  const widthMs = Math.max(1000, Math.ceil((toMs - fromMs) / buckets));
  const source = trendSource(toMs - fromMs);
  const [timeCol, minE, maxE, sumE, countE] =
    source === 'samples'
      ? ['time', 'min(value)', 'max(value)', 'sum(value)', 'count(*)']
      : ['bucket', 'min(min)', 'max(max)', 'sum(sum)', 'sum(count)'];
  const { rows } = await pool.query<{ b: number; mn: number; mx: number; s: number; n: number }>(
    `SELECT floor((extract(epoch FROM ${timeCol}) * 1000 - $2::float8) / $4::float8)::int AS b,
            ${minE} AS mn, ${maxE} AS mx, ${sumE} AS s, ${countE}::int AS n
       FROM ${source}
      WHERE tag_id = $1 AND ${timeCol} >= to_timestamp($2::float8 / 1000) AND ${timeCol} < to_timestamp($3::float8 / 1000)
      GROUP BY 1 ORDER BY 1`,
    [tagId, fromMs, toMs, widthMs],
  );
  return {
    widthMs,
    source,
    buckets: rows.map((r) => ({
      t: fromMs + r.b * widthMs,
      min: r.mn,
      max: r.mx,
      mean: r.s / r.n,
      count: r.n,
    })),
  };
}
