/**
 * Values by decimal scaling (common practice for fixed-resolution readings, no single source):
 * a transmitter that reports 12.3456 sends integers of 10^-4. If every value v of a block is
 * exactly Math.round(v * 10^k) / 10^k for one small k (bit for bit, finite, not -0), the block
 * stores the integers m = Math.round(v * 10^k) as zigzag varint deltas and the decoder computes
 * m / 10^k, the same correctly rounded IEEE 754 division, so the value comes back bit for bit.
 */
import type { ByteReader, ByteWriter } from './varint.js';

/** 10^k for k = 0..15, all exact in float64 (10^22 is the last exact power). */
const POWERS_OF_TEN: readonly number[] = Array.from({ length: 16 }, (_, k) => 10 ** k);
export const MAX_DECIMALS = POWERS_OF_TEN.length - 1;

export function powerOfTen(k: number): number {
  return POWERS_OF_TEN[k]!;
}

function fitsDecimals(v: number, scale: number): boolean {
  const m = Math.round(v * scale);
  return m / scale === v && Number.isSafeInteger(m);
}

/** The smallest k at which every value is a decimal of k places, or -1 if none up to MAX_DECIMALS. */
export function findDecimals(values: Float64Array): number {
  let k = 0;
  let scale = 1;
  for (let i = 0, n = values.length; i < n; i++) {
    const v = values[i]!;
    // Infinity and NaN fail the test below (their m / scale is not v); -0 would come back as +0.
    if (v === 0 && 1 / v < 0) return -1;
    while (!fitsDecimals(v, scale)) {
      if (++k > MAX_DECIMALS) return -1;
      scale = POWERS_OF_TEN[k]!;
    }
  }
  return k;
}

/**
 * Writes the scaled integers of `values` at k decimals as deltas; returns false (nothing usable
 * written) if a value is not exactly such a decimal or a delta is not a safe integer.
 */
export function encodeDecimal(values: Float64Array, k: number, w: ByteWriter): boolean {
  const scale = POWERS_OF_TEN[k]!;
  let previous = 0;
  for (let i = 0, n = values.length; i < n; i++) {
    const v = values[i]!;
    const m = Math.round(v * scale);
    const delta = m - previous;
    if (m / scale !== v || !Number.isSafeInteger(m) || !Number.isSafeInteger(delta)) return false;
    if (v === 0 && 1 / v < 0) return false;
    w.signed(delta);
    previous = m;
  }
  return true;
}

export function decodeDecimal(r: ByteReader, k: number, out: Float64Array): void {
  const scale = POWERS_OF_TEN[k]!;
  let m = 0;
  for (let i = 0, n = out.length; i < n; i++) {
    m += r.signed();
    out[i] = m / scale;
  }
}
