/** Helpers for the codec's tests: a seeded generator and bit-for-bit comparison. */
import type { SampleColumns } from './columns.js';

/**
 * Marsaglia's xorshift32 (G. Marsaglia, "Xorshift RNGs", J. Stat. Softw. 8(14), 2003, shifts
 * 13, 17, 5), seeded and stepped a few times so nearby seeds diverge: uniform in [0, 1). The
 * codec imports nothing of ours, so it keeps its own small generator for its tests.
 */
export function seeded(seed: number): () => number {
  let x = (seed ^ 0x9e3779b9) >>> 0;
  if (x === 0) x = 1; // zero is xorshift's one fixed point
  const step = (): number => {
    x ^= x << 13;
    x ^= x >>> 17;
    x ^= x << 5;
    x >>>= 0;
    return x / 2 ** 32;
  };
  for (let i = 0; i < 8; i++) step();
  return step;
}

/**
 * Sets value i of `a` to the raw bits hi:lo (two 32-bit halves), e.g. a NaN with a payload. Done in
 * place because a NaN carried through a plain JavaScript array may lose its payload (V8 stores
 * NaN in double arrays canonically).
 */
export function setBits(a: Float64Array, i: number, hi: number, lo: number): void {
  const u = new Uint32Array(a.buffer, a.byteOffset, a.length * 2);
  const littleEndian = new Uint8Array(new Uint32Array([1]).buffer)[0] === 1;
  u[2 * i + (littleEndian ? 1 : 0)] = hi;
  u[2 * i + (littleEndian ? 0 : 1)] = lo;
}

export function columns(
  times: number[],
  values: number[] | Float64Array,
  qualities?: number[],
): SampleColumns {
  return {
    times: Float64Array.from(times),
    values: values instanceof Float64Array ? values : Float64Array.from(values),
    qualities: Int16Array.from(qualities ?? times.map(() => 192)),
  };
}

/** The first byte at which two typed arrays differ bit for bit, -1 if none (length counts as a byte). */
export function firstDifference(a: Float64Array | Int16Array, b: Float64Array | Int16Array): number {
  const x = new Uint8Array(a.buffer, a.byteOffset, a.byteLength);
  const y = new Uint8Array(b.buffer, b.byteOffset, b.byteLength);
  const n = Math.min(x.length, y.length);
  for (let i = 0; i < n; i++) if (x[i] !== y[i]) return i;
  return x.length === y.length ? -1 : n;
}
