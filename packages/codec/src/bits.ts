/**
 * Bit streams, most significant bit first, moved 32 bits at a time: JavaScript's bitwise
 * operators work on 32-bit integers, so a 32-bit accumulator needs no BigInt and no carries
 * across numbers. Shifts are taken mod 32 by the language, so shifts by 32 are kept out.
 */
import { truncated } from './errors.js';

/** Writes bit fields of 1..32 bits into a growing byte buffer. */
export class BitWriter {
  bytes: Uint8Array;
  /** Bytes of whole 32-bit words written. */
  pos = 0;
  /** The pending bits, right-aligned; `used` of them (0..31). */
  private acc = 0;
  private used = 0;

  constructor(capacity: number) {
    this.bytes = new Uint8Array(Math.max(16, capacity + 8));
  }

  /** Empties the writer and makes room for `bits` more bits. */
  reset(bits: number): void {
    this.pos = 0;
    this.acc = 0;
    this.used = 0;
    const need = Math.ceil(bits / 8) + 8;
    if (this.bytes.length < need) this.bytes = new Uint8Array(need);
  }

  /** Writes the low n bits of v (1 <= n <= 32; v < 2^n). Room must have been reserved. */
  write(v: number, n: number): void {
    const free = 32 - this.used;
    if (n < free) {
      this.acc = (this.acc << n) | v;
      this.used += n;
      return;
    }
    const rest = n - free; // 0..31 bits of v left over for the next word
    const word = free === 32 ? v : (this.acc << free) | (v >>> rest);
    const bytes = this.bytes;
    const p = this.pos;
    bytes[p] = word >>> 24;
    bytes[p + 1] = word >>> 16;
    bytes[p + 2] = word >>> 8;
    bytes[p + 3] = word;
    this.pos = p + 4;
    this.acc = rest === 0 ? 0 : v & ((1 << rest) - 1);
    this.used = rest;
  }

  /** Bits written so far. */
  bitLength(): number {
    return this.pos * 8 + this.used;
  }

  /** Pads the last byte with zeros and returns the bytes (a view, valid until the next reset). */
  finish(): Uint8Array {
    let p = this.pos;
    let used = this.used;
    const word = used === 0 ? 0 : (this.acc << (32 - used)) >>> 0;
    for (let shift = 24; used > 0; shift -= 8, used -= 8) this.bytes[p++] = word >>> shift;
    return this.bytes.subarray(0, p);
  }
}

/**
 * Reads bit fields from bytes[start, end). Past the end it reads zeros and counts them, so a
 * decode loop needs no bounds test per field; `check()` then reports the truncation.
 */
export class BitReader {
  /** The next bits, left-aligned (bit 31 is the next bit); `avail` of them (1..32). */
  private word = 0;
  private avail = 0;
  private next: number;

  constructor(
    private readonly bytes: Uint8Array,
    start: number,
    private readonly end: number,
    private readonly section: string,
  ) {
    this.next = start;
    this.load();
    this.avail = 32;
  }

  private load(): void {
    const b = this.bytes;
    const p = this.next;
    this.next = p + 4;
    if (p + 4 <= this.end) {
      this.word = ((b[p]! << 24) | (b[p + 1]! << 16) | (b[p + 2]! << 8) | b[p + 3]!) >>> 0;
      return;
    }
    let w = 0;
    for (let i = 0; i < 4; i++) w = (w << 8) | (p + i < this.end ? b[p + i]! : 0);
    this.word = w >>> 0;
  }

  bit(): number {
    const r = this.word >>> 31;
    if (this.avail > 1) {
      this.word <<= 1;
      this.avail--;
    } else {
      this.load();
      this.avail = 32;
    }
    return r;
  }

  /** Reads n bits (1 <= n <= 32) as an unsigned number. */
  read(n: number): number {
    const avail = this.avail;
    const r = this.word >>> (32 - n);
    if (n < avail) {
      this.word <<= n;
      this.avail = avail - n;
      return r;
    }
    if (n === avail) {
      this.load();
      this.avail = 32;
      return r;
    }
    const m = n - avail; // 1..31 bits from the next word
    this.load();
    const w = this.word;
    this.word = w << m;
    this.avail = 32 - m;
    return (r | (w >>> (32 - m))) >>> 0;
  }

  /** Throws CODEC_TRUNCATED if more bits were read than the section holds. */
  check(): void {
    const consumed = (this.next - 4) * 8 + (32 - this.avail);
    if (consumed > this.end * 8) throw truncated(this.section, { bitsMissing: consumed - this.end * 8 });
  }

  /** Bytes of the section the bits read so far occupy (rounded up), counted from its start. */
  bytesUsed(start: number): number {
    return Math.ceil(((this.next - 4) * 8 + (32 - this.avail)) / 8) - start;
  }
}
