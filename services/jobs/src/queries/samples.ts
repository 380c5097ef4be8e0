import type { RawSeries } from '../compute/pipeline.js';
import type { Queryable } from './machines.js';

/**
 * Raw samples of the given tags with from <= time < to, columnar per tag. Times come back as
 * epoch milliseconds computed in SQL, so no Date objects are made per row.
 */
export async function readSamples(
  db: Queryable,
  tagIds: readonly number[],
  fromMs: number,
  toMs: number,
): Promise<Map<number, RawSeries>> {
  const res = await db.query<{ tag_id: number[] | null; t: number[]; v: number[]; q: number[] }>(
    `SELECT array_agg(tag_id ORDER BY tag_id, time) AS tag_id,
                  array_agg((extract(epoch FROM time) * 1000)::float8 ORDER BY tag_id, time) AS t,
                  array_agg(value ORDER BY tag_id, time) AS v,
                  array_agg(quality::int ORDER BY tag_id, time) AS q
             FROM samples
            WHERE tag_id = ANY($1::int[]) AND time >= to_timestamp($2::float8 / 1000) AND time < to_timestamp($3::float8 / 1000)`,
    [[...tagIds], fromMs, toMs],
  );
  const out = new Map<number, RawSeries>();
  const row = res.rows[0];
  if (row === undefined || row.tag_id === null) return out;
  const ids = row.tag_id;
  let start = 0;
  for (let i = 1; i <= ids.length; i++) {
    if (i < ids.length && ids[i] === ids[start]) continue;
    out.set(ids[start] as number, {
      t: Float64Array.from(row.t.slice(start, i)),
      value: Float64Array.from(row.v.slice(start, i)),
      quality: Uint8Array.from(row.q.slice(start, i)),
    });
    start = i;
  }
  return out;
}

/** Earliest sample time [ms] of the given tags, or undefined when they have none. */
export async function earliestSample(db: Queryable, tagIds: readonly number[]): Promise<number | undefined> {
  const res = await db.query<{ t: number | null }>(
    `SELECT (extract(epoch FROM min(time)) * 1000)::float8 AS t FROM samples WHERE tag_id = ANY($1::int[])`,
    [[...tagIds]],
  );
  const t = res.rows[0]?.t;
  return t === null || t === undefined ? undefined : t;
}
