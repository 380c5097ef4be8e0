/**
 * Timestamps [µs since epoch] by delta-of-delta (Pelkonen et al., VLDB 2015, section 4.1.1),
 * written as zigzag varints (varint.ts) instead of the paper's bit buckets: byte-aligned codes
 * decode faster in JavaScript, and a run of zero delta-of-deltas (a regular series) is written
 * once as a 0 followed by the run's length less one, so a steady series costs almost nothing.
 * The first time is written whole, then the delta-of-delta of each later time with the delta
 * before the first taken as 0 (so the first delta-of-delta is the first delta).
 *
 * A block whose span exceeds 2^53 - 1 µs (285 years) would have deltas beyond the safe integers;
 * it is written in the raw mode instead, each time as a zigzag varint.
 */
import { corrupt } from './errors.js';
import type { ByteReader, ByteWriter } from './varint.js';

export const TIME_DELTA_OF_DELTA = 0;
export const TIME_RAW = 1;
const SECTION = 'times';

/** The time mode a series needs: raw only when its span is not a safe integer. */
export function timeMode(times: Float64Array): number {
  const n = times.length;
  return n === 0 || Number.isSafeInteger(times[n - 1]! - times[0]!) ? TIME_DELTA_OF_DELTA : TIME_RAW;
}

export function encodeTimes(times: Float64Array, mode: number, w: ByteWriter): void {
  const n = times.length;
  if (mode === TIME_RAW) {
    for (let i = 0; i < n; i++) w.signed(times[i]!);
    return;
  }
  let previous = times[0]!;
  w.signed(previous);
  let delta = 0;
  let zeros = 0;
  for (let i = 1; i < n; i++) {
    const t = times[i]!;
    const d = t - previous;
    const dod = d - delta;
    previous = t;
    delta = d;
    if (dod === 0) {
      zeros++;
      continue;
    }
    if (zeros > 0) {
      w.signed(0);
      w.unsigned(zeros - 1);
      zeros = 0;
    }
    w.signed(dod);
  }
  if (zeros > 0) {
    w.signed(0);
    w.unsigned(zeros - 1);
  }
}

export function decodeTimes(r: ByteReader, mode: number, out: Float64Array): void {
  if (mode === TIME_RAW) {
    decodeRawTimes(r, out);
    return;
  }
  const n = out.length;
  let t = r.signed();
  out[0] = t;
  let delta = 0;
  let i = 1;
  while (i < n) {
    const dod = r.signed();
    if (dod === 0) {
      const run = r.unsigned() + 1;
      if (run > n - i)
        throw corrupt(SECTION, 'a run of equal steps passes the sample count', { index: i, run });
      for (const stop = i + run; i < stop; i++) {
        t += delta;
        out[i] = t;
      }
      continue;
    }
    delta += dod;
    if (delta < 0 || delta > Number.MAX_SAFE_INTEGER) {
      throw corrupt(SECTION, 'a time step is negative or beyond the safe integers', { index: i, delta });
    }
    t += delta;
    out[i++] = t;
  }
  if (t > Number.MAX_SAFE_INTEGER) throw corrupt(SECTION, 'the last time is beyond the safe integers', { t });
}

function decodeRawTimes(r: ByteReader, out: Float64Array): void {
  let previous = Number.NEGATIVE_INFINITY;
  for (let i = 0, n = out.length; i < n; i++) {
    const t = r.signed();
    if (t < previous) throw corrupt(SECTION, 'times go backwards', { index: i, previous, t });
    out[i] = t;
    previous = t;
  }
}
