/**
 * The one binary COPY a series read makes (PostgreSQL 15 documentation, COPY, "Binary
 * Format"): per tag one row of its hot samples as three arrays (array_agg in one group sees
 * the rows in one order, so the arrays line up), and one row per block overlapping the range
 * with its payload. One statement is one snapshot: a pack committing meanwhile cannot show a
 * key twice or not at all. The server neither sorts nor converts to text, and a tag's hot
 * samples arrive in one protocol message instead of one per sample.
 */
import type pg from 'pg';
import { to as copyTo } from 'pg-copy-streams';
import { COPY_HEADER_BYTES } from '../copy-binary.js';
import { StoreError } from '../errors.js';
import { PG_EPOCH_US, type UsColumns } from './columns.js';

/** Element type oids (pg_type) of the three arrays: timestamptz, float8, int2. */
const TIMESTAMPTZ_OID = 1184;
const FLOAT8_OID = 701;
const INT2_OID = 21;
const TWO_32 = 4_294_967_296;

/** A time bound [ms] as SQL: a finite number goes through to_timestamp, ±Infinity as ±infinity. */
export function timeBound(ms: number): string {
  if (ms === Number.NEGATIVE_INFINITY) return `'-infinity'::timestamptz`;
  if (ms === Number.POSITIVE_INFINITY) return `'infinity'::timestamptz`;
  return `to_timestamp(${ms / 1000})`;
}

/** Checked here because COPY takes no bind parameters. */
export function checkSeriesArgs(tagIds: readonly number[], fromMs: number, toMs: number): void {
  for (const id of tagIds)
    if (!Number.isInteger(id) || id <= 0 || id > 2_147_483_647)
      throw new StoreError('STORE_BAD_REQUEST', `tag id ${id} is not a positive int4`, { tagId: id });
  if (
    Number.isNaN(fromMs) ||
    Number.isNaN(toMs) ||
    fromMs === Number.POSITIVE_INFINITY ||
    toMs === Number.NEGATIVE_INFINITY
  )
    throw new StoreError('STORE_TIME_RANGE', `bad sample range ${fromMs} to ${toMs} [ms]`, { fromMs, toMs });
}

/** SQL of the series COPY over [fromMs, toMs) for the given tags (checked by checkSeriesArgs). */
export function seriesCopySql(
  tagIds: readonly number[],
  fromMs: number,
  toMs: number,
  options: { table?: string; blocks?: boolean } = {},
): string {
  const tags = tagIds.join(', ');
  const from = timeBound(fromMs);
  const to = timeBound(toMs);
  const hot = `SELECT tag_id, array_agg(time), array_agg(value), array_agg(quality), NULL::bytea FROM ${options.table ?? 'samples'}
       WHERE tag_id IN (${tags}) AND time >= ${from} AND time < ${to} GROUP BY tag_id`;
  const blocks = `SELECT tag_id, NULL, NULL, NULL, payload FROM sample_blocks
       WHERE tag_id IN (${tags}) AND last_time >= ${from} AND first_time < ${to}`;
  return `COPY (${hot}${(options.blocks ?? true) ? ` UNION ALL ${blocks}` : ''}) TO STDOUT (FORMAT binary)`;
}

/** What the series COPY holds per tag: hot columns (times µs, scan order) and block payloads. */
export interface SeriesCopy {
  readonly hot: Map<number, UsColumns>;
  readonly blocks: Map<number, Uint8Array[]>;
}

export async function runCopyOut(client: pg.ClientBase, sql: string): Promise<Buffer> {
  const stream = client.query(copyTo(sql));
  const chunks: Buffer[] = [];
  for await (const chunk of stream) chunks.push(chunk as Buffer);
  return chunks.length === 1 ? chunks[0]! : Buffer.concat(chunks);
}

function badCopy(what: string, offset: number): StoreError {
  return new StoreError('STORE_BAD_REQUEST', `unexpected ${what} in the series COPY stream`, { offset });
}

/** Element count of a one-dimensional array field without NULLs at o (its length word first). */
function arrayField(
  view: DataView,
  o: number,
  end: number,
  elementType: number,
  elementBytes: number,
): number {
  if (o + 24 > end) throw badCopy('end of data', o);
  const bytes = view.getInt32(o);
  if (o + 4 + bytes > end) throw badCopy('array length', o);
  // ndim 1, no NULL elements, the element type, then the dimension's size and lower bound.
  if (view.getInt32(o + 4) !== 1 || view.getInt32(o + 8) !== 0 || view.getInt32(o + 12) !== elementType)
    throw badCopy('array header', o);
  const n = view.getInt32(o + 16);
  if (bytes !== 20 + n * (4 + elementBytes)) throw badCopy('array size', o);
  return n;
}

function readHot(view: DataView, o: number, end: number): { columns: UsColumns; next: number } {
  const n = arrayField(view, o, end, TIMESTAMPTZ_OID, 8);
  const times = new Float64Array(n);
  let e = o + 24;
  for (let i = 0; i < n; i++, e += 12)
    times[i] = view.getInt32(e + 4) * TWO_32 + view.getUint32(e + 8) + PG_EPOCH_US;
  o = e;
  if (arrayField(view, o, end, FLOAT8_OID, 8) !== n) throw badCopy('float8 array size', o);
  const values = new Float64Array(n);
  e = o + 24;
  for (let i = 0; i < n; i++, e += 12) values[i] = view.getFloat64(e + 4);
  o = e;
  if (arrayField(view, o, end, INT2_OID, 2) !== n) throw badCopy('int2 array size', o);
  const qualities = new Int16Array(n);
  e = o + 24;
  for (let i = 0; i < n; i++, e += 6) qualities[i] = view.getInt16(e + 4);
  return { columns: { times, values, qualities }, next: e };
}

/** Splits the series COPY into hot columns and block payloads per tag. */
export function decodeSeriesCopy(b: Buffer): SeriesCopy {
  const view = new DataView(b.buffer, b.byteOffset, b.byteLength);
  const end = b.length;
  const out: SeriesCopy = { hot: new Map(), blocks: new Map() };
  let o = COPY_HEADER_BYTES;
  while (o + 2 <= end && view.getInt16(o) !== -1) {
    if (view.getInt16(o) !== 5 || o + 10 > end || view.getInt32(o + 2) !== 4) throw badCopy('tuple', o);
    const tag = view.getInt32(o + 6);
    o += 10;
    if (view.getInt32(o) === -1) {
      // A block row: three NULL arrays, then the payload.
      if (view.getInt32(o + 4) !== -1 || view.getInt32(o + 8) !== -1) throw badCopy('block row', o);
      o += 12;
      const len = view.getInt32(o);
      if (len < 0 || o + 4 + len > end) throw badCopy('payload length', o);
      const payload = new Uint8Array(b.buffer, b.byteOffset + o + 4, len);
      o += 4 + len;
      const list = out.blocks.get(tag);
      if (list === undefined) out.blocks.set(tag, [payload]);
      else list.push(payload);
    } else {
      const { columns, next } = readHot(view, o, end);
      if (next + 4 > end || view.getInt32(next) !== -1) throw badCopy('hot row payload', next);
      o = next + 4;
      out.hot.set(tag, columns);
    }
  }
  return out;
}
