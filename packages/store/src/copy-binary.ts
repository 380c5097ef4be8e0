/**
 * PostgreSQL binary COPY encoding for the sample writer (PostgreSQL 15 documentation,
 * "COPY", section "Binary Format"): an 11-byte signature, a flags word and a header
 * extension length, then per tuple an int16 field count and per field an int32 length and
 * the value in network byte order, and an int16 -1 trailer. Binary rows spare the server
 * from parsing timestamps and floats as text, which is most of the cost of a text COPY.
 * Value formats: int4/int2 big-endian, float8 IEEE 754 big-endian, timestamptz int64
 * microseconds since 2000-01-01 00:00 UTC, bool one byte.
 */
import { StoreError } from './errors.js';

/** The 11-byte signature that opens every binary COPY stream. */
export const COPY_SIGNATURE = Buffer.from([0x50, 0x47, 0x43, 0x4f, 0x50, 0x59, 0x0a, 0xff, 0x0d, 0x0a, 0x00]);
/** Signature, int32 flags and int32 header-extension length (no extension). */
export const COPY_HEADER_BYTES = 19;
const TRAILER_BYTES = 2;
/** 2000-01-01T00:00:00Z [ms since the Unix epoch], PostgreSQL's timestamp epoch. */
export const PG_EPOCH_MS = 946_684_800_000;
const TWO_32 = 4_294_967_296;
const INT4: readonly [number, number] = [-(2 ** 31), 2 ** 31 - 1];
const INT2: readonly [number, number] = [-32768, 32767];

/** DataView setters wrap out-of-range integers silently; refuse them instead. */
function checkInt(v: number, [lo, hi]: readonly [number, number], column: string): void {
  if (!Number.isInteger(v) || v < lo || v > hi) {
    throw new StoreError('STORE_BAD_SAMPLE', `${column} ${v} does not fit its column type`, {
      column,
      value: v,
    });
  }
}

/** A sample as the writer holds it: time [ms since epoch, integer], value in the tag's unit. */
export interface SampleRow {
  readonly tagId: number;
  readonly time: number;
  readonly value: number;
  readonly quality: number;
  /** The caller's reference (CSV line, push item index), echoed in write outcomes; never stored. */
  readonly ref?: number | undefined;
}

/** One rollup row (min, max, sum, count, last) of a bucket; `hourly` picks samples_1h over samples_1m. */
export interface RollupRow {
  readonly tagId: number;
  /** Bucket start [ms since epoch]. */
  readonly bucket: number;
  readonly min: number;
  readonly max: number;
  readonly sum: number;
  readonly count: number;
  readonly lastValue: number;
  /** [ms since epoch] */
  readonly lastTime: number;
  readonly hourly: boolean;
}

function header(buf: Buffer): number {
  COPY_SIGNATURE.copy(buf, 0);
  buf.writeInt32BE(0, 11);
  buf.writeInt32BE(0, 15);
  return COPY_HEADER_BYTES;
}

/** A DataView over a Buffer (its setters are inlined by V8, unlike Buffer's checked writers). */
function view(buf: Buffer): DataView {
  return new DataView(buf.buffer, buf.byteOffset, buf.byteLength);
}

/**
 * Writes a timestamptz [ms since epoch] at `offset` as int64 microseconds since 2000.
 * Split into two 32-bit words: the microsecond count (about 8e14 today) is exact in a
 * double, and Math.floor keeps two's complement right for instants before 2000.
 */
export function writeCopyTime(dv: DataView, offset: number, ms: number): void {
  const us = Math.round((ms - PG_EPOCH_MS) * 1000);
  const hi = Math.floor(us / TWO_32);
  dv.setInt32(offset, hi);
  dv.setUint32(offset + 4, us - hi * TWO_32);
}

/** A timestamptz written by writeCopyTime (or sent by the server) at `offset`, as ms since the epoch. */
export function readCopyTime(dv: DataView, offset: number): number {
  // Exact below 2^53 us (year 2255).
  return (dv.getInt32(offset) * TWO_32 + dv.getUint32(offset + 4)) / 1000 + PG_EPOCH_MS;
}

/** Bytes of one sample tuple: count(2) + tag(4+4) + time(4+8) + value(4+8) + quality(4+2). */
const SAMPLE_BYTES = 40;

/** Binary COPY data for (tag_id int4, time timestamptz, value float8, quality int2). */
export function encodeSamples(rows: readonly SampleRow[]): Buffer {
  const buf = Buffer.allocUnsafe(COPY_HEADER_BYTES + rows.length * SAMPLE_BYTES + TRAILER_BYTES);
  const dv = view(buf);
  let o = header(buf);
  for (const r of rows) {
    checkInt(r.tagId, INT4, 'tag_id');
    checkInt(r.quality, INT2, 'quality');
    dv.setInt16(o, 4);
    dv.setInt32(o + 2, 4);
    dv.setInt32(o + 6, r.tagId);
    dv.setInt32(o + 10, 8);
    writeCopyTime(dv, o + 14, r.time);
    dv.setInt32(o + 22, 8);
    dv.setFloat64(o + 26, r.value);
    dv.setInt32(o + 34, 2);
    dv.setInt16(o + 38, r.quality);
    o += SAMPLE_BYTES;
  }
  dv.setInt16(o, -1);
  return buf;
}

/** Bytes of one rollup tuple: count(2) + 2 x int4(8) + 2 x time(12) + 4 x float8(12) [+ bool(5)]. */
const ROLLUP_BYTES = 2 + 2 * 8 + 2 * 12 + 4 * 12;
const HOURLY_BYTES = 5;

/**
 * Binary COPY data for (tag_id int4, bucket timestamptz, min, max, sum float8, count int4,
 * last_value float8, last_time timestamptz) as in samples_1m and samples_1h, followed by
 * (hourly bool) for the staging table when `withHourly`; written row by row without an
 * object per row (a batch of 1-minute samples has as many minute buckets as rows).
 */
export class RollupEncoder {
  private readonly buf: Buffer;
  private readonly dv: DataView;
  private offset: number;
  private count = 0;
  /** `capacity`: the most rows that will be added. */
  constructor(
    capacity: number,
    private readonly withHourly = true,
  ) {
    const row = ROLLUP_BYTES + (withHourly ? HOURLY_BYTES : 0);
    this.buf = Buffer.allocUnsafe(COPY_HEADER_BYTES + capacity * row + TRAILER_BYTES);
    this.dv = view(this.buf);
    this.offset = header(this.buf);
  }

  add(r: RollupRow): void {
    this.addFields(r.tagId, r.bucket, r.min, r.max, r.sum, r.count, r.lastValue, r.lastTime, r.hourly);
  }

  addFields(
    tagId: number,
    bucket: number,
    min: number,
    max: number,
    sum: number,
    count: number,
    lastValue: number,
    lastTime: number,
    hourly: boolean,
  ): void {
    checkInt(tagId, INT4, 'tag_id');
    checkInt(count, INT4, 'count');
    const dv = this.dv;
    const o = this.offset;
    dv.setInt16(o, this.withHourly ? 9 : 8);
    dv.setInt32(o + 2, 4);
    dv.setInt32(o + 6, tagId);
    dv.setInt32(o + 10, 8);
    writeCopyTime(dv, o + 14, bucket);
    dv.setInt32(o + 22, 8);
    dv.setFloat64(o + 26, min);
    dv.setInt32(o + 34, 8);
    dv.setFloat64(o + 38, max);
    dv.setInt32(o + 46, 8);
    dv.setFloat64(o + 50, sum);
    dv.setInt32(o + 58, 4);
    dv.setInt32(o + 62, count);
    dv.setInt32(o + 66, 8);
    dv.setFloat64(o + 70, lastValue);
    dv.setInt32(o + 78, 8);
    writeCopyTime(dv, o + 82, lastTime);
    if (this.withHourly) {
      dv.setInt32(o + 90, 1);
      dv.setUint8(o + 94, hourly ? 1 : 0);
      this.offset = o + ROLLUP_BYTES + HOURLY_BYTES;
    } else {
      this.offset = o + ROLLUP_BYTES;
    }
    this.count++;
  }

  /** Rows added so far. */
  get rows(): number {
    return this.count;
  }

  finish(): Buffer {
    this.dv.setInt16(this.offset, -1);
    return this.buf.subarray(0, this.offset + TRAILER_BYTES);
  }
}

export function encodeRollups(rows: readonly RollupRow[]): Buffer {
  const e = new RollupEncoder(rows.length);
  for (const r of rows) e.add(r);
  return e.finish();
}
