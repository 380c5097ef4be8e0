/**
 * Deterministic pseudo-random numbers as pure functions of integer keys, so the demo plant's
 * value of a tag at a time is the same whether it is made for the history, the CSV drop or
 * the OPC UA simulation, in any order and in any process.
 */

/** A 32-bit integer mix (xor-shift-multiply rounds); returns an unsigned 32-bit integer. */
function mix32(x: number): number {
  x ^= x >>> 16;
  x = Math.imul(x, 0x7feb352d);
  x ^= x >>> 15;
  x = Math.imul(x, 0x846ca68b);
  x ^= x >>> 16;
  return x >>> 0;
}

/** Uniform in (0, 1) from three integer keys. */
export function uniform(a: number, b: number, c: number): number {
  const h = mix32(mix32(mix32(a | 0) ^ (b | 0)) ^ Math.imul(c | 0, 0x9e3779b1));
  return (h + 0.5) / 4294967296;
}

/** Standard normal from three integer keys (Box-Muller). */
export function normal(a: number, b: number, c: number): number {
  const u1 = uniform(a, b, c);
  const u2 = uniform(a ^ 0x5bd1e995, b, c + 1);
  return Math.sqrt(-2 * Math.log(u1)) * Math.cos(2 * Math.PI * u2);
}

/**
 * A smooth random-looking signal in about [-1, 1]: a sum of sines with fixed, key-dependent
 * periods and phases. Pure in t, so any time can be asked for without state.
 */
export function wander(key: number, tSeconds: number, basePeriodSeconds: number): number {
  let sum = 0;
  let weight = 0;
  for (let k = 0; k < 4; k++) {
    const period = basePeriodSeconds * (1 + 1.7 * uniform(key, k, 1));
    const phase = 2 * Math.PI * uniform(key, k, 2);
    const w = 1 / (k + 1);
    sum += w * Math.sin((2 * Math.PI * tSeconds) / period + phase);
    weight += w;
  }
  return sum / weight;
}
