/**
 * Block rows: a tag's columns cut into blocks (one per UTC day, at most `maxSamples` each),
 * their summaries, and their binary COPY encoding for sample_blocks (PostgreSQL 15
 * documentation, COPY, "Binary Format").
 */
import { encodeBlock } from '@isentrope/codec';
import { COPY_HEADER_BYTES, COPY_SIGNATURE } from '../copy-binary.js';
import { PG_EPOCH_US, type UsColumns } from './columns.js';

export const DAY_US = 86_400_000_000;
/**
 * Samples per block at most. A day of 1 s data (86,400) fits one block; faster series are
 * cut so a late sample's merge decodes and re-encodes a bounded block.
 */
export const MAX_BLOCK_SAMPLES = 100_000;

export interface BlockRow {
  readonly tagId: number;
  /** [µs since the Unix epoch] */
  readonly firstUs: number;
  readonly lastUs: number;
  readonly count: number;
  /** Over the finite values; undefined when there are none. */
  readonly min: number | undefined;
  readonly max: number | undefined;
  readonly sum: number | undefined;
  readonly payload: Uint8Array;
}

/** Summaries over finite values, summed in time order (as SQL's sum over the rows in order). */
export function blockRow(tagId: number, c: UsColumns): BlockRow {
  let min = Number.POSITIVE_INFINITY;
  let max = Number.NEGATIVE_INFINITY;
  let sum = 0;
  let finite = 0;
  const v = c.values;
  for (let i = 0; i < v.length; i++) {
    const x = v[i] as number;
    if (!Number.isFinite(x)) continue;
    if (x < min) min = x;
    if (x > max) max = x;
    sum += x;
    finite++;
  }
  const n = c.times.length;
  return {
    tagId,
    firstUs: c.times[0] as number,
    lastUs: c.times[n - 1] as number,
    count: n,
    min: finite > 0 ? min : undefined,
    max: finite > 0 ? max : undefined,
    sum: finite > 0 ? sum : undefined,
    payload: encodeBlock(c),
  };
}

/** A tag's sorted columns cut at UTC day boundaries and every `maxSamples` samples. */
export function cutBlocks(c: UsColumns, maxSamples: number = MAX_BLOCK_SAMPLES): UsColumns[] {
  const out: UsColumns[] = [];
  const t = c.times;
  let start = 0;
  while (start < t.length) {
    const dayEnd = Math.floor((t[start] as number) / DAY_US) * DAY_US + DAY_US;
    let end = start + 1;
    const limit = Math.min(t.length, start + maxSamples);
    while (end < limit && (t[end] as number) < dayEnd) end++;
    out.push({
      times: t.subarray(start, end),
      values: c.values.subarray(start, end),
      qualities: c.qualities.subarray(start, end),
    });
    start = end;
  }
  return out;
}

const TWO_32 = 4_294_967_296;

function putTime(dv: DataView, o: number, us: number): number {
  const v = us - PG_EPOCH_US;
  const hi = Math.floor(v / TWO_32);
  dv.setInt32(o, 8);
  dv.setInt32(o + 4, hi);
  dv.setUint32(o + 8, v - hi * TWO_32);
  return o + 12;
}

function putFloat(dv: DataView, o: number, x: number | undefined): number {
  if (x === undefined) {
    dv.setInt32(o, -1);
    return o + 4;
  }
  dv.setInt32(o, 8);
  dv.setFloat64(o + 4, x);
  return o + 12;
}

/** Binary COPY data for sample_blocks (tag_id, first_time, last_time, sample_count, min, max, sum, payload). */
export function encodeBlockRows(rows: readonly BlockRow[]): Buffer {
  let size = COPY_HEADER_BYTES + 2;
  for (const r of rows) size += 2 + 8 + 12 + 12 + 8 + 36 + 4 + r.payload.length;
  const buf = Buffer.allocUnsafe(size);
  const dv = new DataView(buf.buffer, buf.byteOffset, buf.byteLength);
  COPY_SIGNATURE.copy(buf, 0);
  buf.writeInt32BE(0, 11);
  buf.writeInt32BE(0, 15);
  let o = COPY_HEADER_BYTES;
  for (const r of rows) {
    dv.setInt16(o, 8);
    dv.setInt32(o + 2, 4);
    dv.setInt32(o + 6, r.tagId);
    o = putTime(dv, o + 10, r.firstUs);
    o = putTime(dv, o, r.lastUs);
    dv.setInt32(o, 4);
    dv.setInt32(o + 4, r.count);
    o = putFloat(dv, o + 8, r.min);
    o = putFloat(dv, o, r.max);
    o = putFloat(dv, o, r.sum);
    dv.setInt32(o, r.payload.length);
    buf.set(r.payload, o + 4);
    o += 4 + r.payload.length;
  }
  dv.setInt16(o, -1);
  return buf.subarray(0, o + 2);
}

export const COPY_BLOCKS =
  'COPY sample_blocks (tag_id, first_time, last_time, sample_count, min_value, max_value, sum_value, payload) FROM STDIN (FORMAT binary)';
