import { COPY_HEADER_BYTES, readCopyTime } from '@isentrope/store/copy-binary';
import type pg from 'pg';
import { to as copyTo } from 'pg-copy-streams';
import type { RawSeries } from '../compute/pipeline.js';
import { JobsError } from '../errors.js';
import type { Queryable } from './machines.js';

/** One tuple of (tag_id int4, time timestamptz, value float8, quality int2): field count and four length-prefixed fields. */
const TUPLE_BYTES = 2 + (4 + 4) + (4 + 8) + (4 + 8) + (4 + 2);

/**
 * Raw samples of the given tags with from <= time < to, columnar per tag and sorted by time.
 * Read with a binary COPY out of a plain SELECT (PostgreSQL documentation, COPY, "Binary
 * Format"): the server sends fixed 40-byte tuples and neither sorts nor aggregates; rows come in
 * the order the scan finds them, nearly always time order per tag, and a tag whose rows do not is
 * sorted here. Measured on the jobs bench: about a third of the server time and half the total
 * of an ordered string_agg of bytea records.
 */
export async function readSamples(
  pool: pg.Pool,
  tagIds: readonly number[],
  fromMs: number,
  toMs: number,
): Promise<Map<number, RawSeries>> {
  // COPY takes no bind parameters: the values are checked to be plain numbers before they go in.
  for (const id of tagIds)
    if (!Number.isSafeInteger(id))
      throw new JobsError('JOBS_BAD_CONFIG', `tag id ${id} is not an integer`, { tagId: id });
  if (!Number.isFinite(fromMs) || !Number.isFinite(toMs))
    throw new JobsError('JOBS_BAD_RANGE', `bad sample range ${fromMs} to ${toMs} [ms]`, { fromMs, toMs });
  const out = new Map<number, RawSeries>();
  if (tagIds.length === 0 || !(toMs > fromMs)) return out;
  const client = await pool.connect();
  let chunks: Buffer[];
  try {
    const stream = client.query(
      copyTo(
        `COPY (SELECT tag_id, time, value, quality FROM samples
                WHERE tag_id IN (${tagIds.join(', ')})
                  AND time >= to_timestamp(${fromMs / 1000}) AND time < to_timestamp(${toMs / 1000}))
         TO STDOUT (FORMAT binary)`,
      ),
    );
    chunks = [];
    for await (const chunk of stream) chunks.push(chunk as Buffer);
  } finally {
    client.release();
  }
  return decodeSampleCopy(Buffer.concat(chunks));
}

/** Split the binary COPY of readSamples into sorted columns per tag. */
export function decodeSampleCopy(b: Buffer): Map<number, RawSeries> {
  const view = new DataView(b.buffer, b.byteOffset, b.byteLength);
  // First pass: rows per tag, so each tag's columns are allocated once.
  const counts = new Map<number, number>();
  let o = COPY_HEADER_BYTES;
  let rows = 0;
  while (o + 2 <= b.length && view.getInt16(o) !== -1) {
    if (view.getInt16(o) !== 4 || o + TUPLE_BYTES > b.length)
      throw new JobsError('JOBS_BAD_SAMPLES', 'unexpected tuple in the samples COPY stream', { offset: o });
    const tag = view.getInt32(o + 6);
    counts.set(tag, (counts.get(tag) ?? 0) + 1);
    o += TUPLE_BYTES;
    rows++;
  }
  const series = new Map<number, { t: Float64Array; value: Float64Array; quality: Int16Array; n: number }>();
  for (const [tag, n] of counts)
    series.set(tag, { t: new Float64Array(n), value: new Float64Array(n), quality: new Int16Array(n), n: 0 });
  o = COPY_HEADER_BYTES;
  for (let r = 0; r < rows; r++, o += TUPLE_BYTES) {
    const s = series.get(view.getInt32(o + 6)) as {
      t: Float64Array;
      value: Float64Array;
      quality: Int16Array;
      n: number;
    };
    s.t[s.n] = readCopyTime(view, o + 14);
    s.value[s.n] = view.getFloat64(o + 26);
    // As stored; the pipeline reads its OPC DA class (alignQuality).
    s.quality[s.n] = view.getInt16(o + 38);
    s.n++;
  }
  const out = new Map<number, RawSeries>();
  for (const [tag, s] of series) out.set(tag, sortedByTime(s));
  return out;
}

/** The series itself when already in time order (the usual case), else a sorted copy. */
function sortedByTime(s: RawSeries): RawSeries {
  const { t } = s;
  let ordered = true;
  for (let i = 1; i < t.length && ordered; i++) ordered = (t[i] as number) >= (t[i - 1] as number);
  if (ordered) return { t: s.t, value: s.value, quality: s.quality };
  const idx = Array.from({ length: t.length }, (_, i) => i).sort(
    (i, j) => (t[i] as number) - (t[j] as number),
  );
  return {
    t: Float64Array.from(idx, (i) => t[i] as number),
    value: Float64Array.from(idx, (i) => s.value[i] as number),
    quality: Int16Array.from(idx, (i) => s.quality[i] as number),
  };
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
