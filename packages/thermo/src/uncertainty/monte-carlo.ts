import { BadInputError } from '../errors.js';
import type { ModelOutput } from './gum.js';

/** Mulberry32: a small 32-bit PRNG, uniform on [0, 1). Enough for checking, not for cryptography. */
export function mulberry32(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Standard normal deviates by the Box-Muller transform (Box and Muller, 1958), two per pair of uniforms. */
export function gaussian(uniform: () => number): () => number {
  let spare: number | undefined;
  return () => {
    if (spare !== undefined) {
      const s = spare;
      spare = undefined;
      return s;
    }
    // 1 - u keeps the logarithm's argument in (0, 1].
    const r = Math.sqrt(-2 * Math.log(1 - uniform()));
    const theta = 2 * Math.PI * uniform();
    spare = r * Math.sin(theta);
    return r * Math.cos(theta);
  };
}

export interface MonteCarloOptions {
  /** Number of trials M (JCGM 101:2008 7.2 suggests 10^6 for a 95 % interval; fewer suffice for a check). */
  readonly trials?: number;
  readonly seed?: number;
}

export interface MonteCarloSummary {
  readonly mean: number;
  /** Standard deviation of the output sample: its standard uncertainty (JCGM 101:2008 7.6). */
  readonly uncertainty: number;
  /** Probabilistically symmetric 95 % coverage interval (JCGM 101:2008 7.7). */
  readonly low: number;
  readonly high: number;
  /** Trials in which the model failed or gave no value for this output. */
  readonly failed: number;
}

/**
 * Monte Carlo propagation of distributions (JCGM 101:2008) with independent Gaussian inputs
 * N(x_i, u_i^2): for checking the first-order GUM figures on non-linear models.
 */
export function propagateMonteCarlo(
  f: (x: Float64Array) => ModelOutput,
  x: ArrayLike<number>,
  u: ArrayLike<number>,
  options: MonteCarloOptions = {},
): Record<string, MonteCarloSummary> {
  if (x.length !== u.length) {
    throw new BadInputError(
      'uncertainty',
      `needs one uncertainty per input: ${x.length} inputs, ${u.length} uncertainties`,
    );
  }
  const trials = options.trials ?? 20_000;
  if (!Number.isInteger(trials) || trials < 2) {
    throw new BadInputError('trials', `must be an integer >= 2, got ${trials}`);
  }
  const normal = gaussian(mulberry32(options.seed ?? 1));
  const samples = new Map<string, number[]>();
  const failures = new Map<string, number>();
  const xs = new Float64Array(x.length);
  let failedAll = 0;
  for (let t = 0; t < trials; t++) {
    for (let i = 0; i < x.length; i++) xs[i] = x[i]! + u[i]! * normal();
    let y: ModelOutput;
    try {
      y = f(Float64Array.from(xs));
    } catch {
      failedAll++;
      continue;
    }
    const entries: [string, number | undefined][] =
      y instanceof Float64Array ? Array.from(y, (v, j) => [String(j), v]) : Object.entries(y);
    for (const [k, v] of entries) {
      if (v === undefined || !Number.isFinite(v)) {
        failures.set(k, (failures.get(k) ?? 0) + 1);
        continue;
      }
      let list = samples.get(k);
      if (list === undefined) {
        list = [];
        samples.set(k, list);
      }
      list.push(v);
    }
  }
  const out: Record<string, MonteCarloSummary> = {};
  for (const [k, list] of samples) {
    const n = list.length;
    if (n < 2) continue;
    let mean = 0;
    for (const v of list) mean += v;
    mean /= n;
    let ss = 0;
    for (const v of list) ss += (v - mean) * (v - mean);
    const sorted = Float64Array.from(list).sort();
    out[k] = {
      mean,
      uncertainty: Math.sqrt(ss / (n - 1)),
      low: sorted[Math.floor(0.025 * (n - 1))]!,
      high: sorted[Math.ceil(0.975 * (n - 1))]!,
      failed: failedAll + (failures.get(k) ?? 0),
    };
  }
  return out;
}
