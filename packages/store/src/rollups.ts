/**
 * 1-minute and 1-hour rollups of samples, recomputed over the buckets a batch touched
 * (called by the sample writer inside the batch's transaction, under per-tag advisory
 * locks, so two writers on one tag cannot each miss the other's rows).
 * Recomputing rather than adding makes a re-sent batch change nothing.
 */
import type { Queryable } from './errors.js';

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

/** Recomputes samples_1m over the given minute buckets from raw samples. */
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
