/**
 * rebuildRollups: samples_1m and samples_1h recomputed from the raw samples wherever they
 * live (hot rows and packed blocks), for repair. A module of its own because it reads
 * through blocks/, which builds on rollups.ts.
 */
import type pg from 'pg';
import { copyIn } from './blocks/copy-in.js';
import { rollupStageFromSeries } from './blocks/rollup-source.js';
import { StoreError } from './errors.js';
import { ensurePartitions } from './partitions.js';
import {
  ROLLUP_COLUMNS_SQL as COLUMNS,
  COPY_ROLLUP_STAGE,
  HOUR_MS,
  ROLLUP_STAGE_DDL,
  TAG_LOCK_CLASS,
} from './rollups.js';

export interface RebuildRollupsOptions {
  /** Tags to rebuild; default every tag with samples, blocks or rollups in the range. */
  readonly tagIds?: readonly number[];
  /** Range [from, to); widened to whole hours. */
  readonly from: Date | number;
  readonly to: Date | number;
}

/** Span of raw samples read and aggregated at a time, per tag: bounds the memory of a rebuild. */
const CHUNK_MS = 86_400_000;

/** The range [from, to) widened to whole hours [ms]; a bad range or tag id is refused. */
function checkedRange(options: RebuildRollupsOptions): { t0: number; t1: number } {
  const ms = (t: Date | number): number => (typeof t === 'number' ? t : t.getTime());
  const from0 = ms(options.from);
  const to0 = ms(options.to);
  if (!Number.isFinite(from0) || !Number.isFinite(to0) || !(to0 > from0)) {
    throw new StoreError('STORE_TIME_RANGE', `bad rollup rebuild range: ${from0} to ${to0} [ms]`, {
      from: from0,
      to: to0,
    });
  }
  for (const id of options.tagIds ?? []) {
    if (!Number.isInteger(id) || id <= 0 || id > 2 ** 31 - 1) {
      throw new StoreError('STORE_BAD_REQUEST', `tag id ${id} is not a positive int4`, { tagId: id });
    }
  }
  return { t0: Math.floor(from0 / HOUR_MS) * HOUR_MS, t1: Math.ceil(to0 / HOUR_MS) * HOUR_MS };
}

/** Tags with hot samples, blocks or hourly rollups in [from, to). */
async function tagsInRange(client: pg.ClientBase, from: string, to: string): Promise<number[]> {
  const found = await client.query<{ tag_id: number }>(
    `SELECT DISTINCT tag_id FROM samples WHERE time >= $1 AND time < $2
     UNION SELECT tag_id FROM sample_blocks WHERE last_time >= $1 AND first_time < $2
     UNION SELECT DISTINCT tag_id FROM samples_1h WHERE bucket >= $1 AND bucket < $2`,
    [from, to],
  );
  return found.rows.map((r) => r.tag_id);
}

/**
 * Recomputes samples_1m and samples_1h from raw samples (hot rows and blocks, readSeries)
 * over [from, to) widened to whole hours, for the given tags (repair after rows were written
 * around the writer, or after raw retention is undone). Runs in one transaction under the
 * writers' per-tag locks, so no batch or pack interleaves; buckets left with no samples are
 * deleted. The buckets are aggregated as the writer aggregates a batch (encodeBatchRollups,
 * one sequential sum per bucket), per tag and day, whose edges are whole hours, so no bucket
 * is cut. Returns the rows written.
 */
export async function rebuildRollups(
  pool: pg.Pool,
  options: RebuildRollupsOptions,
): Promise<{ tags: number; minuteRows: number; hourRows: number }> {
  const { t0, t1 } = checkedRange(options);
  await ensurePartitions(pool, 'samples_1m', t0, t1 - 1);
  await ensurePartitions(pool, 'samples_1h', t0, t1 - 1);
  const from = new Date(t0).toISOString();
  const to = new Date(t1).toISOString();
  const client = await pool.connect();
  try {
    // Outside the transaction, as the writer creates it: a rollback cannot take it away.
    await client.query(ROLLUP_STAGE_DDL);
    await client.query('BEGIN');
    const tagIds =
      options.tagIds === undefined ? await tagsInRange(client, from, to) : [...new Set(options.tagIds)];
    tagIds.sort((a, b) => a - b);
    await client.query('SELECT pg_advisory_xact_lock($1, t) FROM unnest($2::int[]) AS t ORDER BY t', [
      TAG_LOCK_CLASS,
      tagIds,
    ]);
    const range = [tagIds, from, to];
    await client.query(
      'DELETE FROM samples_1m WHERE tag_id = ANY($1) AND bucket >= $2 AND bucket < $3',
      range,
    );
    await client.query(
      'DELETE FROM samples_1h WHERE tag_id = ANY($1) AND bucket >= $2 AND bucket < $3',
      range,
    );
    for (const tagId of tagIds)
      for (let a = t0; a < t1; a += CHUNK_MS)
        await copyIn(
          client,
          COPY_ROLLUP_STAGE,
          await rollupStageFromSeries(client, [tagId], a, Math.min(a + CHUNK_MS, t1)),
        );
    const r = await client.query<{ m: number; h: number }>(
      `WITH m AS (INSERT INTO samples_1m (${COLUMNS}) SELECT ${COLUMNS} FROM rollup_stage WHERE NOT hourly RETURNING 1),
            h AS (INSERT INTO samples_1h (${COLUMNS}) SELECT ${COLUMNS} FROM rollup_stage WHERE hourly RETURNING 1)
       SELECT (SELECT count(*)::int FROM m) AS m, (SELECT count(*)::int FROM h) AS h`,
    );
    await client.query('COMMIT');
    return { tags: tagIds.length, minuteRows: r.rows[0]!.m, hourRows: r.rows[0]!.h };
  } catch (error) {
    await client.query('ROLLBACK').catch(() => {});
    throw error;
  } finally {
    client.release();
  }
}
