import { bucketSeries, readSeries } from '@isentrope/store';
import type pg from 'pg';

export interface SampleRow {
  time: Date;
  value: number;
  quality: number;
}

/** First window of a page [ms]; doubled while a page is not full, so sparse tags take few reads. */
const FIRST_WINDOW_MS = 3_600_000;

/**
 * Raw samples of a tag in [from, to), oldest first, keyset-paginated on time: hot rows and
 * packed blocks alike (readSeries), read in growing windows until the page is full.
 */
export async function listSamples(
  pool: pg.Pool,
  tagId: number,
  fromMs: number,
  toMs: number,
  limit: number,
  afterMs: number | undefined,
): Promise<SampleRow[]> {
  const out: SampleRow[] = [];
  let start = afterMs === undefined ? fromMs : Math.max(fromMs, afterMs);
  let window = FIRST_WINDOW_MS;
  while (out.length < limit && start < toMs) {
    const end = Math.min(toMs, start + window);
    const s = (await readSeries(pool, [tagId], start, end)).get(tagId);
    for (let i = 0; s !== undefined && i < s.times.length && out.length < limit; i++) {
      const t = s.times[i] as number;
      if (afterMs !== undefined && !(t > afterMs)) continue;
      out.push({ time: new Date(t), value: s.values[i] as number, quality: s.qualities[i] as number });
    }
    start = end;
    window *= 2;
  }
  return out;
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

/** Downsampled samples: min, max, mean and count per bucket, from raw samples (readSeries) or a rollup. */
export async function sampleTrend(
  pool: pg.Pool,
  tagId: number,
  fromMs: number,
  toMs: number,
  buckets: number,
): Promise<{ widthMs: number; source: string; buckets: SampleBucket[] }> {
  const widthMs = Math.max(1000, Math.ceil((toMs - fromMs) / buckets));
  const source = trendSource(toMs - fromMs);
  let rows: { b: number; mn: number; mx: number; s: number; n: number }[];
  if (source === 'samples') {
    const series = (await readSeries(pool, [tagId], fromMs, toMs)).get(tagId);
    rows = (
      series === undefined ? [] : bucketSeries(series, (ms) => Math.floor((ms - fromMs) / widthMs))
    ).map((b) => ({ b: b.index, mn: b.min, mx: b.max, s: b.sum, n: b.count }));
  } else {
    const res = await pool.query<{ b: number; mn: number; mx: number; s: number; n: number }>(
      `SELECT floor((extract(epoch FROM bucket) * 1000 - $2::float8) / $4::float8)::int AS b,
              min(min) AS mn, max(max) AS mx, sum(sum) AS s, sum(count)::int AS n
         FROM ${source}
        WHERE tag_id = $1 AND bucket >= to_timestamp($2::float8 / 1000) AND bucket < to_timestamp($3::float8 / 1000)
        GROUP BY 1 ORDER BY 1`,
      [tagId, fromMs, toMs, widthMs],
    );
    rows = res.rows;
  }
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
