import type { RawSeries } from '@isentrope/compute';
import { readSeries } from '@isentrope/store';
import type pg from 'pg';
import { JobsError } from '../errors.js';
import type { Queryable } from './machines.js';

/**
 * Raw samples of the given tags with from <= time < to, columnar per tag and sorted by time:
 * the hot rows and the decoded blocks as one series (readSeries, packages/store/src/blocks),
 * read by one binary COPY (one row per tag of hot samples as three arrays, one per block).
 */
export async function readSamples(
  pool: pg.Pool,
  tagIds: readonly number[],
  fromMs: number,
  toMs: number,
): Promise<Map<number, RawSeries>> {
  for (const id of tagIds)
    if (!Number.isSafeInteger(id))
      throw new JobsError('JOBS_BAD_CONFIG', `tag id ${id} is not an integer`, { tagId: id });
  if (!Number.isFinite(fromMs) || !Number.isFinite(toMs))
    throw new JobsError('JOBS_BAD_RANGE', `bad sample range ${fromMs} to ${toMs} [ms]`, { fromMs, toMs });
  const out = new Map<number, RawSeries>();
  for (const [tag, s] of await readSeries(pool, tagIds, fromMs, toMs))
    out.set(tag, { t: s.times, value: s.values, quality: s.qualities });
  return out;
}

/** Earliest sample time [ms] of the given tags (hot rows or blocks), or undefined when they have none. */
export async function earliestSample(db: Queryable, tagIds: readonly number[]): Promise<number | undefined> {
  const res = await db.query<{ t: number | null }>(
    `SELECT (extract(epoch FROM least(
        (SELECT min(time) FROM samples WHERE tag_id = ANY($1::int[])),
        (SELECT min(first_time) FROM sample_blocks WHERE tag_id = ANY($1::int[])))) * 1000)::float8 AS t`,
    [[...tagIds]],
  );
  const t = res.rows[0]?.t;
  return t === null || t === undefined ? undefined : t;
}
