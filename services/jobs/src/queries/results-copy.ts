/**
 * The binary COPY body of result rows (pure: no I/O), shared by the results writer and the
 * compute workers, which encode their rows where they computed them.
 */

import type { ResultRow } from '@isentrope/compute';
import { COPY_SIGNATURE, writeCopyTime } from '@isentrope/store/copy-binary';
import { JobsError } from '../errors.js';

/** Numeric result columns and their ResultRow keys, in table order. */
export const NUM_COLUMNS = [
  ['p_in', 'pIn'],
  ['t_in', 'tIn'],
  ['h_in', 'hIn'],
  ['s_in', 'sIn'],
  ['p_out', 'pOut'],
  ['t_out', 'tOut'],
  ['h_out', 'hOut'],
  ['s_out', 'sOut'],
  ['t_out_s', 'tOutS'],
  ['h_out_s', 'hOutS'],
  ['mass_flow', 'massFlow'],
  ['efficiency', 'efficiency'],
  ['u_efficiency', 'uEfficiency'],
  ['polytropic_efficiency', 'polytropicEfficiency'],
  ['u_polytropic_efficiency', 'uPolytropicEfficiency'],
  ['specific_work', 'specificWork'],
  ['u_specific_work', 'uSpecificWork'],
  ['power', 'power'],
  ['u_power', 'uPower'],
  ['entropy_generation', 'entropyGeneration'],
  ['u_entropy_generation', 'uEntropyGeneration'],
  ['operating_point', 'operatingPoint'],
] as const satisfies readonly (readonly [string, keyof ResultRow])[];

/**
 * The column list of the COPY, in the order the encoder writes the fields. computed_at is left to
 * its column default, now(): the start of the writing transaction, as the upsert path sets it
 * (12 bytes a row less to send and to parse).
 */
export const RESULT_COPY_COLUMNS = `machine_id, time, ${NUM_COLUMNS.map(([c]) => c).join(', ')}, steady, flags, valid`;

/** Bytes of a row with a few flags: 22 float8 fields, the key, two bools and the flags array. */
const ROW_BYTES_TYPICAL = 2 + 8 + 12 + NUM_COLUMNS.length * 12 + 5 + 5 + 64;

/** Object id of the text type (pg_type), the element type of the flags array. */
const TEXT_OID = 25;
const FIELDS = 2 + NUM_COLUMNS.length + 3;

/**
 * Rows in PostgreSQL's binary COPY format (PostgreSQL documentation, COPY, "Binary Format"):
 * per tuple an int16 field count, then per field an int32 length (-1 = NULL) and the value in the
 * type's binary send form (int4; timestamptz as int8 microseconds since 2000-01-01; float8; bool
 * as one byte; text[] as ndim, has-null, element type oid, then size and lower bound per
 * dimension and length-prefixed UTF-8 elements), all big-endian. Written through a DataView
 * (DataView setters are big-endian by default and several times cheaper than Buffer's
 * writeXxxBE per field, measured); each distinct flag set is encoded once and copied after.
 */
class CopyEncoder {
  private buf: Buffer;
  private view: DataView;
  private at = 0;

  /** `bytes`: the expected size, so the buffer is allocated once (it grows when exceeded). */
  constructor(bytes = 1 << 20) {
    this.buf = Buffer.allocUnsafe(Math.max(64, bytes));
    this.view = new DataView(this.buf.buffer, this.buf.byteOffset, this.buf.byteLength);
  }
  /** A flags field (length word and array) per distinct '|'-joined flag set. */
  private readonly flagFields = new Map<string, Buffer>();

  private need(n: number): void {
    if (this.at + n <= this.buf.length) return;
    const next = Buffer.allocUnsafe(Math.max(this.buf.length * 2, this.at + n));
    this.buf.copy(next, 0, 0, this.at);
    this.buf = next;
    this.view = new DataView(next.buffer, next.byteOffset, next.byteLength);
  }

  header(): void {
    this.need(19);
    COPY_SIGNATURE.copy(this.buf, this.at);
    this.at += COPY_SIGNATURE.length;
    this.view.setInt32(this.at, 0); // flags: no OIDs
    this.view.setInt32(this.at + 4, 0); // header extension length
    this.at += 8;
  }

  /** The text[] field of a flag set, length word included. */
  private flagField(flags: readonly string[]): Buffer {
    const key = flags.join('|');
    let field = this.flagFields.get(key);
    if (field !== undefined) return field;
    const elements = flags.map((f) => Buffer.from(f, 'utf8'));
    const ndim = elements.length === 0 ? 0 : 1;
    let size = 12 + ndim * 8;
    for (const e of elements) size += 4 + e.length;
    field = Buffer.allocUnsafe(4 + size);
    let o = field.writeInt32BE(size, 0);
    o = field.writeInt32BE(ndim, o);
    o = field.writeInt32BE(0, o); // no NULL elements
    o = field.writeInt32BE(TEXT_OID, o);
    if (ndim === 1) {
      o = field.writeInt32BE(elements.length, o);
      o = field.writeInt32BE(1, o); // lower bound
      for (const e of elements) {
        o = field.writeInt32BE(e.length, o);
        o += e.copy(field, o);
      }
    }
    this.flagFields.set(key, field);
    return field;
  }

  row(r: ResultRow): void {
    const flags = this.flagField(r.flags);
    this.need(2 + 8 + 12 + NUM_COLUMNS.length * 12 + 5 + flags.length + 5);
    const v = this.view;
    let o = this.at;
    v.setInt16(o, FIELDS);
    v.setInt32(o + 2, 4);
    v.setInt32(o + 6, r.machineId);
    o = timestamp(v, o + 10, r.time);
    // Field by field in NUM_COLUMNS order: named reads stay monomorphic (a keyed loop does not).
    o = float8(v, o, r.pIn);
    o = float8(v, o, r.tIn);
    o = float8(v, o, r.hIn);
    o = float8(v, o, r.sIn);
    o = float8(v, o, r.pOut);
    o = float8(v, o, r.tOut);
    o = float8(v, o, r.hOut);
    o = float8(v, o, r.sOut);
    o = float8(v, o, r.tOutS);
    o = float8(v, o, r.hOutS);
    o = float8(v, o, r.massFlow);
    o = float8(v, o, r.efficiency);
    o = float8(v, o, r.uEfficiency);
    o = float8(v, o, r.polytropicEfficiency);
    o = float8(v, o, r.uPolytropicEfficiency);
    o = float8(v, o, r.specificWork);
    o = float8(v, o, r.uSpecificWork);
    o = float8(v, o, r.power);
    o = float8(v, o, r.uPower);
    o = float8(v, o, r.entropyGeneration);
    o = float8(v, o, r.uEntropyGeneration);
    o = float8(v, o, r.operatingPoint);
    v.setInt32(o, 1);
    v.setUint8(o + 4, r.steady ? 1 : 0);
    o += 5;
    this.buf.set(flags, o);
    o += flags.length;
    v.setInt32(o, 1);
    v.setUint8(o + 4, r.valid ? 1 : 0);
    this.at = o + 5;
  }

  trailer(): void {
    this.need(2);
    this.view.setInt16(this.at, -1);
    this.at += 2;
  }

  get size(): number {
    return this.at;
  }

  /** The bytes written (a view of the encoder's buffer). */
  take(): Buffer {
    return this.buf.subarray(0, this.at);
  }
}

/** A float8 field at o (NULL for null and non-finite values); returns the next offset. */
function float8(v: DataView, o: number, x: number | null): number {
  if (x === null || !Number.isFinite(x)) {
    v.setInt32(o, -1);
    return o + 4;
  }
  v.setInt32(o, 8);
  v.setFloat64(o + 4, x);
  return o + 12;
}

/** A timestamptz field at o [ms since the epoch]: length 8, then the store's int8 microseconds. */
function timestamp(v: DataView, o: number, ms: number): number {
  v.setInt32(o, 8);
  writeCopyTime(v, o + 4, ms);
  return o + 12;
}

/**
 * A COPY body built row by row for one machine and [fromMs, toMs): each row is checked and
 * encoded as it comes, so a caller that streams its rows keeps none of them alive.
 */
export class ResultCopyBody {
  private readonly enc: CopyEncoder;
  rows = 0;

  /** `expectedRows` sizes the buffer (a row of the usual flags takes about 330 bytes). */
  constructor(
    private readonly machineId: number,
    private readonly fromMs: number,
    private readonly toMs: number,
    expectedRows?: number,
  ) {
    this.enc = new CopyEncoder(
      expectedRows === undefined ? undefined : 64 + expectedRows * ROW_BYTES_TYPICAL,
    );
    this.enc.header();
  }

  /** Throws JOBS_BAD_RANGE for a row of another machine or outside the range. */
  add(r: ResultRow): void {
    if (r.machineId !== this.machineId || !(r.time >= this.fromMs && r.time < this.toMs))
      throw new JobsError(
        'JOBS_BAD_RANGE',
        'a result row lies outside the machine and range being replaced',
        {
          machineId: this.machineId,
          fromMs: this.fromMs,
          toMs: this.toMs,
          rowMachineId: r.machineId,
          rowTime: r.time,
        },
      );
    this.enc.row(r);
    this.rows++;
  }

  /** The finished body (header, rows, trailer). */
  finish(): Buffer {
    this.enc.trailer();
    return this.enc.take();
  }
}

/**
 * A whole COPY body (header, rows, trailer) for rows of one machine in [fromMs, toMs); throws
 * JOBS_BAD_RANGE, before anything is written, for a row of another machine or time.
 */
export function encodeResultRows(
  rows: readonly ResultRow[],
  machineId: number,
  fromMs: number,
  toMs: number,
): Buffer {
  const body = new ResultCopyBody(machineId, fromMs, toMs);
  for (const r of rows) body.add(r);
  return body.finish();
}
