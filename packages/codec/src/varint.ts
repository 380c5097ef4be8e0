/**
 * Byte-aligned variable-length integers: unsigned LEB128 (7 bits a byte, high bit = more bytes
 * follow) and zigzag for signed values (0, -1, 1, -2, ... -> 0, 1, 2, 3, ...), as in the
 * Protocol Buffers encoding guide ("Base 128 Varints", "Signed Integers"). Every safe integer
 * (|x| <= 2^53 - 1) is exact: a zigzag code above 2^53 is never formed as one number, its
 * sign bit and its magnitude (x or -x - 1) are written separately, which gives the same bytes.
 */
import { type CodecError, corrupt, truncated } from './errors.js';

const TWO_POW_31 = 0x80000000;
/** A zigzag code of a safe integer has at most 54 bits: 8 bytes of 7. */
const MAX_VARINT_BYTES = 8;

/** Appends bytes to a buffer that grows by doubling (module scratch, copied out at the end). */
export class ByteWriter {
  bytes: Uint8Array;
  pos = 0;

  constructor(capacity: number) {
    this.bytes = new Uint8Array(Math.max(16, capacity));
  }

  /** Makes room for `more` bytes after pos. */
  reserve(more: number): void {
    if (this.pos + more <= this.bytes.length) return;
    const grown = new Uint8Array(Math.max(this.bytes.length * 2, this.pos + more));
    grown.set(this.bytes.subarray(0, this.pos));
    this.bytes = grown;
  }

  byte(b: number): void {
    this.reserve(1);
    this.bytes[this.pos++] = b;
  }

  /** u: a non-negative safe integer. */
  unsigned(u: number): void {
    this.reserve(MAX_VARINT_BYTES);
    const bytes = this.bytes;
    let pos = this.pos;
    while (u >= TWO_POW_31) {
      bytes[pos++] = (u & 0x7f) | 0x80; // & takes the low 32 bits exactly, so the low 7 are right
      u = Math.floor(u / 128);
    }
    while (u >= 0x80) {
      bytes[pos++] = (u & 0x7f) | 0x80;
      u >>>= 7;
    }
    bytes[pos++] = u;
    this.pos = pos;
  }

  /** x: a safe integer, zigzag coded. */
  signed(x: number): void {
    if (x >= -0x40000000 && x < 0x40000000) {
      this.unsigned(((x << 1) ^ (x >> 31)) >>> 0);
      return;
    }
    // zigzag(x) = 2q + s with s the sign and q = x or -x - 1: low byte holds s and 6 bits of q.
    const s = x < 0 ? 1 : 0;
    const q = s === 1 ? -x - 1 : x;
    this.reserve(MAX_VARINT_BYTES);
    this.bytes[this.pos++] = ((q & 0x3f) << 1) | s | 0x80; // q >= 2^29 here, so more bytes follow
    this.unsigned(Math.floor(q / 64));
  }

  /** The bytes written so far (a view, valid until the next write). */
  view(): Uint8Array {
    return this.bytes.subarray(0, this.pos);
  }
}

/** Reads the integers ByteWriter writes, from bytes[pos, end); throws CodecError past the end. */
export class ByteReader {
  pos: number;

  constructor(
    readonly bytes: Uint8Array,
    start: number,
    readonly end: number,
    readonly section: string,
  ) {
    this.pos = start;
  }

  byte(): number {
    if (this.pos >= this.end) throw truncated(this.section, { at: this.pos });
    return this.bytes[this.pos++]!;
  }

  unsigned(): number {
    const b = this.byte();
    return b < 0x80 ? b : this.unsignedTail(b & 0x7f, 128);
  }

  /** The rest of a varint whose first bits gave `value`; `scale` is the weight of the next 7. */
  private unsignedTail(value: number, scale: number): number {
    for (let i = 1; i < MAX_VARINT_BYTES; i++) {
      const b = this.byte();
      // Exact while the sum stays safe; a true sum above 2^53 rounds to at least 2^53, so it is caught.
      value += (b & 0x7f) * scale;
      if (b < 0x80) {
        if (value > Number.MAX_SAFE_INTEGER) throw this.tooLong(value);
        return value;
      }
      scale *= 128;
    }
    throw this.tooLong(value);
  }

  signed(): number {
    const b = this.byte();
    if (b < 0x80) return (b >>> 1) ^ -(b & 1);
    const s = b & 1;
    const q = this.unsignedTail((b >>> 1) & 0x3f, 64);
    if (s === 1 && q === Number.MAX_SAFE_INTEGER) throw this.tooLong(-q - 1);
    return s === 1 ? -q - 1 : q;
  }

  private tooLong(value: number): CodecError {
    return corrupt(this.section, 'an integer is longer than any safe integer', { at: this.pos, value });
  }
}
