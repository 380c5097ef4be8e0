/**
 * Values by the XOR method of Pelkonen et al., "Gorilla: a fast, scalable, in-memory time series
 * database", VLDB 2015, section 4.1.2: the first value as its 64 raw bits; then each value XORed
 * with the one before it,
 *   '0'                          XOR is zero (same value, bit for bit);
 *   '10' + meaningful bits       the nonzero bits fall inside the previous window (leading zeros
 *                                and trailing zeros at least those of the window): the window's
 *                                bits are written;
 *   '11' + 5 bits leading zeros + 6 bits meaningful length + the meaningful bits: a new window.
 * Leading zeros above 31 are written as 31 (5 bits); a length of 64 is written as 0 (6 bits), as
 * a length of 0 never occurs. The first XOR always opens a window ('10' before any is damage).
 * Values are handled as two 32-bit halves (float-halves.ts), not BigInt.
 */
import type { BitReader, BitWriter } from './bits.js';
import { corrupt } from './errors.js';
import { HI, halves, LO } from './float-halves.js';

const SECTION = 'values (XOR)';
/** Worst case per value after the first: '11', 5 + 6 bits of window, 64 meaningful bits. */
export const XOR_MAX_BITS_PER_VALUE = 77;

function trailingZeros(x: number): number {
  return 31 - Math.clz32(x & -x);
}

/** Writes the `len` bits of the 64-bit (xh, xl) that sit above its `trail` low bits. */
function writeWindow(w: BitWriter, xh: number, xl: number, trail: number, len: number): void {
  let hi: number;
  let lo: number;
  if (trail === 0) {
    hi = xh;
    lo = xl;
  } else if (trail < 32) {
    hi = xh >>> trail;
    lo = (xl >>> trail) | (xh << (32 - trail));
  } else {
    hi = 0;
    lo = xh >>> (trail - 32);
  }
  if (len > 32) {
    w.write(hi, len - 32);
    w.write(lo, 32);
  } else {
    w.write(lo, len);
  }
}

/**
 * Writes `values` (at least one); returns false as soon as more than `budgetBits` bits were
 * written (the caller then keeps another encoding). The writer must have room for
 * 64 + 77 (n - 1) bits.
 */
export function encodeXor(values: Float64Array, w: BitWriter, budgetBits: number): boolean {
  const u = halves(values);
  let ph = u[HI]!;
  let pl = u[LO]!;
  w.write(ph, 32);
  w.write(pl, 32);
  let winLead = 64; // no window yet: no XOR has 64 leading zeros, so the first opens one
  let winTrail = 64;
  let winLen = 0;
  for (let i = 1, n = values.length; i < n; i++) {
    const h = u[2 * i + HI]!;
    const l = u[2 * i + LO]!;
    const xh = h ^ ph;
    const xl = l ^ pl;
    ph = h;
    pl = l;
    if ((xh | xl) === 0) {
      w.write(0, 1);
      continue;
    }
    const lead = xh !== 0 ? Math.clz32(xh) : 32 + Math.clz32(xl);
    const trail = xl !== 0 ? trailingZeros(xl) : 32 + trailingZeros(xh);
    if (lead >= winLead && trail >= winTrail) {
      w.write(0b10, 2);
    } else {
      winLead = Math.min(lead, 31);
      winTrail = trail;
      winLen = 64 - winLead - trail;
      w.write((0b11 << 11) | (winLead << 6) | (winLen & 63), 13);
    }
    writeWindow(w, xh, xl, winTrail, winLen);
    if ((i & 63) === 0 && w.bitLength() > budgetBits) return false;
  }
  return w.bitLength() <= budgetBits;
}

/** Reads `out.length` values (at least one) into out, bit for bit. */
export function decodeXor(r: BitReader, out: Float64Array): void {
  const u = halves(out);
  let ph = r.read(32);
  let pl = r.read(32);
  u[HI] = ph;
  u[LO] = pl;
  let lead = 0;
  let len = 0; // 0: no window yet
  let trail = 0;
  for (let i = 1, n = out.length; i < n; i++) {
    if (r.bit() === 1) {
      if (r.bit() === 1) {
        lead = r.read(5);
        const coded = r.read(6);
        len = coded === 0 ? 64 : coded;
        trail = 64 - lead - len;
        if (trail < 0) throw corrupt(SECTION, 'a window is wider than 64 bits', { index: i, lead, len });
      } else if (len === 0) {
        throw corrupt(SECTION, 'a value reuses a window before any was set', { index: i });
      }
      let rh = 0;
      let rl: number;
      if (len > 32) {
        rh = r.read(len - 32);
        rl = r.read(32);
      } else {
        rl = r.read(len);
      }
      if (trail === 0) {
        ph ^= rh;
        pl ^= rl;
      } else if (trail < 32) {
        ph ^= (rh << trail) | (rl >>> (32 - trail));
        pl ^= rl << trail;
      } else {
        ph ^= rl << (trail - 32);
      }
    }
    u[2 * i + HI] = ph;
    u[2 * i + LO] = pl;
  }
}
