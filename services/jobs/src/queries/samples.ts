import type { RawSeries } from '../compute/pipeline.js';
import type { Queryable } from './machines.js';

/** Milliseconds from the Unix epoch to PostgreSQL's timestamp epoch (2000-01-01 UTC). */
const PG_EPOCH_MS = 946_684_800_000;

/**
 * Raw samples of the given tags with from <= time < to, columnar per tag. Each tag's samples come
 * back as one bytea of fixed 18-byte records (timestamptz_send: int8 microseconds since
 * 2000-01-01; float8send: the value; int2send: the quality, all big-endian), so the driver parses
 * one hex string per tag instead of a text field per sample and no Date objects are made.
 */
export async function readSamples(
  db: Queryable,
  tagIds: readonly number[],
  fromMs: number,
  toMs: number,
): Promise<Map<number, RawSeries>> {
  const res = await db.query<{ tag_id: number; b: Buffer }>(
    `SELECT tag_id, string_agg(timestamptz_send(time) || float8send(value) || int2send(quality), ''::bytea ORDER BY time) AS b
       FROM samples
      WHERE tag_id = ANY($1::int[]) AND time >= to_timestamp($2::float8 / 1000) AND time < to_timestamp($3::float8 / 1000)
      GROUP BY tag_id`,
    [[...tagIds], fromMs, toMs],
  );
  const out = new Map<number, RawSeries>();
  for (const row of res.rows) out.set(row.tag_id, decodeSamples(row.b));
  return out;
}

/** Decode the 18-byte records of readSamples. */
export function decodeSamples(b: Buffer): RawSeries {
  const n = Math.floor(b.length / 18);
  const t = new Float64Array(n);
  const value = new Float64Array(n);
  const quality = new Int16Array(n);
  const view = new DataView(b.buffer, b.byteOffset, b.byteLength);
  for (let i = 0, o = 0; i < n; i++, o += 18) {
    // int8 as two 32-bit halves: exact below 2^53 us (year 2255).
    const us = view.getInt32(o) * 4_294_967_296 + view.getUint32(o + 4);
    t[i] = us / 1000 + PG_EPOCH_MS;
    value[i] = view.getFloat64(o + 8);
    // As stored; the pipeline reads its OPC DA class (alignQuality).
    quality[i] = view.getInt16(o + 16);
  }
  return { t, value, quality };
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
