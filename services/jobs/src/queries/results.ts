/**
 * Results writer and watermarks. `writeResults` is an idempotent upsert on (machine_id, time)
 * through unnest arrays (one statement per batch; works the same on every PostgreSQL).
 * Written here until packages/store exports its own writer.
 */

import type { ResultRow } from '@isentrope/compute';
import { ensurePartitions } from '@isentrope/store';
import type pg from 'pg';
import { from as copyFrom } from 'pg-copy-streams';
import type { Queryable } from './machines.js';
import { encodeResultRows, NUM_COLUMNS, RESULT_COPY_COLUMNS } from './results-copy.js';

/** Monthly partitions of `results` for [fromMs, toMs]: the store's partition mechanism (cached, one lock). */
export async function ensureResultPartitions(pool: pg.Pool, fromMs: number, toMs: number): Promise<void> {
  await ensurePartitions(pool, 'results', fromMs, toMs);
}

/** Queues a range of written results for the analysis job (analysis_pending, migrations/0007). */
const QUEUE_RANGE_SQL = `INSERT INTO analysis_pending (machine_id, from_time, to_time)
  VALUES ($1, to_timestamp($2::float8 / 1000), to_timestamp($3::float8 / 1000))`;

/** Upsert result rows (partitions must exist: ensureResultPartitions); their spans are queued for the analysis job. */
export async function writeResults(db: Queryable, rows: readonly ResultRow[]): Promise<void> {
  const batch = 5000;
  for (let k = 0; k < rows.length; k += batch) {
    const part = rows.slice(k, k + batch);
    const values: unknown[] = [part.map((r) => r.machineId), part.map((r) => r.time)];
    // Non-finite figures are stored as NULL, as the COPY path stores them.
    for (const [, key] of NUM_COLUMNS)
      values.push(part.map((r) => (r[key] !== null && Number.isFinite(r[key]) ? r[key] : null)));
    values.push(part.map((r) => r.steady));
    // text[][] cannot be ragged: flags travel as one '|'-joined text per row.
    values.push(part.map((r) => r.flags.join('|')));
    values.push(part.map((r) => r.valid));
    const n = NUM_COLUMNS.length;
    const cols = NUM_COLUMNS.map(([c]) => c);
    const args = NUM_COLUMNS.map((_, i) => `$${i + 3}::float8[]`);
    await db.query(
      `WITH written AS (
       INSERT INTO results (machine_id, time, ${cols.join(', ')}, steady, flags, valid, computed_at)
       SELECT u.m, to_timestamp(u.t / 1000), ${cols.map((_, i) => `u.c${i}`).join(', ')}, u.steady,
              CASE WHEN u.flags = '' THEN '{}'::text[] ELSE string_to_array(u.flags, '|') END, u.valid, now()
         FROM unnest($1::int[], $2::float8[], ${args.join(', ')}, $${n + 3}::boolean[], $${n + 4}::text[], $${n + 5}::boolean[])
           AS u(m, t, ${cols.map((_, i) => `c${i}`).join(', ')}, steady, flags, valid)
       ON CONFLICT (machine_id, time) DO UPDATE SET
         ${cols.map((c) => `${c} = EXCLUDED.${c}`).join(', ')},
         steady = EXCLUDED.steady, flags = EXCLUDED.flags, valid = EXCLUDED.valid, computed_at = EXCLUDED.computed_at
       RETURNING machine_id, time)
       INSERT INTO analysis_pending (machine_id, from_time, to_time)
       SELECT machine_id, min(time), max(time) + interval '1 millisecond' FROM written GROUP BY machine_id`,
      values,
    );
  }
}

/**
 * Replace one machine's results in [fromMs, toMs) by `rows` (all of that machine and range): a
 * DELETE of the range and a binary COPY in one transaction, the fast path of a backfill.
 */
export async function replaceResultsRange(
  pool: pg.Pool,
  machineId: number,
  fromMs: number,
  toMs: number,
  rows: readonly ResultRow[],
): Promise<void> {
  // Encoded (and checked) before the transaction: an error thrown mid-COPY would leave it open.
  await copyResultsRange(pool, machineId, fromMs, toMs, encodeResultRows(rows, machineId, fromMs, toMs));
}

/**
 * Replace one machine's results in [fromMs, toMs) by an encoded COPY body (encodeResultRows,
 * possibly made on a compute worker). When a concurrent writer committed rows of the range
 * between the DELETE and the COPY (unique violation), the transaction is tried again: its DELETE
 * then removes them, and both writers computed the same rows.
 */
export async function copyResultsRange(
  pool: pg.Pool,
  machineId: number,
  fromMs: number,
  toMs: number,
  body: Buffer,
): Promise<void> {
  for (let attempt = 1; ; attempt++) {
    const client = await pool.connect();
    try {
      await client.query('BEGIN');
      await client.query(
        `DELETE FROM results WHERE machine_id = $1 AND time >= to_timestamp($2::float8 / 1000) AND time < to_timestamp($3::float8 / 1000)`,
        [machineId, fromMs, toMs],
      );
      const stream = client.query(
        copyFrom(`COPY results (${RESULT_COPY_COLUMNS}) FROM STDIN (FORMAT binary)`),
      );
      await new Promise<void>((resolve, reject) => {
        stream.on('finish', resolve);
        stream.on('error', reject);
        stream.end(body);
      });
      await client.query(QUEUE_RANGE_SQL, [machineId, fromMs, toMs]);
      await client.query('COMMIT');
      return;
    } catch (error) {
      await client.query('ROLLBACK').catch(() => {});
      // 23505 unique_violation: another writer committed rows of this range meanwhile.
      if ((error as { code?: unknown }).code !== '23505' || attempt >= 3) throw error;
    } finally {
      client.release();
    }
  }
}

/** Result rows of a machine in [from, to) as ResultRow (for comparisons, the alert job and tests). */
export async function readResults(
  db: Queryable,
  machineId: number,
  fromMs: number,
  toMs: number,
): Promise<ResultRow[]> {
  const cols = NUM_COLUMNS.map(([c, k]) => `${c} AS "${k}"`).join(', ');
  const res = await db.query<ResultRow>(
    `SELECT machine_id AS "machineId", (extract(epoch FROM time) * 1000)::float8 AS time, ${cols}, steady, flags, valid
       FROM results WHERE machine_id = $1 AND time >= to_timestamp($2::float8 / 1000) AND time < to_timestamp($3::float8 / 1000)
      ORDER BY time`,
    [machineId, fromMs, toMs],
  );
  return res.rows;
}

/** Compute watermark of a machine and the config hash it was computed with. */
export interface ComputeWatermark {
  readonly watermarkMs: number;
  readonly configHash: string;
}

/**
 * The compute watermark is stored in job_watermarks as job 'compute', key '<machine id>#<config
 * hash>': the table has no column for the hash, and a key that carries it makes a config change
 * visible with no schema change.
 */
export async function readComputeWatermark(
  db: Queryable,
  machineId: number,
): Promise<ComputeWatermark | undefined> {
  const res = await db.query<{ key: string; w: number }>(
    `SELECT key, (extract(epoch FROM watermark) * 1000)::float8 AS w FROM job_watermarks
      WHERE job = 'compute' AND split_part(key, '#', 1) = $1`,
    [String(machineId)],
  );
  const row = res.rows[0];
  if (row === undefined) return undefined;
  return { watermarkMs: row.w, configHash: row.key.split('#')[1] ?? '' };
}

export async function writeComputeWatermark(
  db: Queryable,
  machineId: number,
  configHash: string,
  watermarkMs: number,
): Promise<void> {
  await db.query(
    `DELETE FROM job_watermarks WHERE job = 'compute' AND split_part(key, '#', 1) = $1 AND key <> $2`,
    [String(machineId), `${machineId}#${configHash}`],
  );
  await db.query(
    `INSERT INTO job_watermarks (job, key, watermark, updated_at) VALUES ('compute', $1, to_timestamp($2::float8 / 1000), now())
     ON CONFLICT (job, key) DO UPDATE SET watermark = EXCLUDED.watermark, updated_at = now()`,
    [`${machineId}#${configHash}`, watermarkMs],
  );
}

/** A generic watermark (job, key) [ms]. */
export async function readWatermark(db: Queryable, job: string, key: string): Promise<number | undefined> {
  const res = await db.query<{ w: number }>(
    `SELECT (extract(epoch FROM watermark) * 1000)::float8 AS w FROM job_watermarks WHERE job = $1 AND key = $2`,
    [job, key],
  );
  return res.rows[0]?.w;
}

export async function writeWatermark(db: Queryable, job: string, key: string, ms: number): Promise<void> {
  await db.query(
    `INSERT INTO job_watermarks (job, key, watermark, updated_at) VALUES ($1, $2, to_timestamp($3::float8 / 1000), now())
     ON CONFLICT (job, key) DO UPDATE SET watermark = EXCLUDED.watermark, updated_at = now()`,
    [job, key, ms],
  );
}

/** Compute watermarks of every machine (or the given ones), in one query. */
export async function readComputeWatermarks(
  db: Queryable,
  machineIds?: readonly number[],
): Promise<Map<number, ComputeWatermark>> {
  const res = await db.query<{ key: string; w: number }>(
    `SELECT key, (extract(epoch FROM watermark) * 1000)::float8 AS w FROM job_watermarks
      WHERE job = 'compute' AND ($1::text[] IS NULL OR split_part(key, '#', 1) = ANY($1::text[]))`,
    [machineIds === undefined ? null : machineIds.map(String)],
  );
  const out = new Map<number, ComputeWatermark>();
  for (const row of res.rows) {
    const [id, hash] = row.key.split('#');
    const machineId = Number(id);
    if (Number.isInteger(machineId)) out.set(machineId, { watermarkMs: row.w, configHash: hash ?? '' });
  }
  return out;
}

/** Several compute watermarks in two statements (see writeComputeWatermark). */
export async function writeComputeWatermarks(
  db: Queryable,
  marks: readonly { readonly machineId: number; readonly configHash: string; readonly watermarkMs: number }[],
): Promise<void> {
  if (marks.length === 0) return;
  const keys = marks.map((m) => `${m.machineId}#${m.configHash}`);
  await db.query(
    `DELETE FROM job_watermarks WHERE job = 'compute' AND split_part(key, '#', 1) = ANY($1::text[]) AND NOT (key = ANY($2::text[]))`,
    [marks.map((m) => String(m.machineId)), keys],
  );
  await db.query(
    `INSERT INTO job_watermarks (job, key, watermark, updated_at)
     SELECT 'compute', u.k, to_timestamp(u.w / 1000), now() FROM unnest($1::text[], $2::float8[]) AS u(k, w)
     ON CONFLICT (job, key) DO UPDATE SET watermark = EXCLUDED.watermark, updated_at = now()`,
    [keys, marks.map((m) => m.watermarkMs)],
  );
}
