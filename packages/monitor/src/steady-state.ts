/**
 * Steady-state detection per key tag, and for the machine (steady only when every key tag is).
 *
 * Primary method: the R-statistic of Cao and Rhinehart (1995), Ind. Eng. Chem. Res. 34, 4219.
 * Three exponentially weighted filters run over the samples X_i:
 *   X_f,i   = lambda1 X_i + (1 - lambda1) X_f,i-1                       (filtered value)
 *   v2_f,i  = lambda2 (X_i - X_f,i-1)^2 + (1 - lambda2) v2_f,i-1        (filtered squared deviation)
 *   d2_f,i  = lambda3 (X_i - X_i-1)^2 + (1 - lambda3) d2_f,i-1          (filtered squared difference)
 *   R_i     = (2 - lambda1) v2_f,i / d2_f,i
 * Both variance estimates agree for independent noise about a constant mean (R near 1); in a
 * transient the deviation from the lagging filter grows faster than the successive differences,
 * and R rises. The point is transient when R > R_crit. Published defaults: lambda1 = 0.2,
 * lambda2 = 0.1, lambda3 = 0.1, R_crit about 2. The filters need a warm-up (about 1/lambda2
 * points); those points are reported as not steady. The statistic assumes uncorrelated noise:
 * a strongly autocorrelated signal reads as transient more often.
 * At the very sample of a step both filtered variances jump alike and R stays near 2 - lambda1;
 * R rises one sample later. So each transient run is widened by `padPoints` samples on both sides
 * (default 2; the job runs on past data, so looking one or two samples ahead costs nothing).
 *
 * Optional second test (common practice, no source): over a trailing window, the least-squares
 * slope times the window duration must stay within `maxChange` and the residual standard
 * deviation within `maxSpread`.
 */
import { LengthMismatchError, MonitorBadInputError } from './errors.js';

export interface CaoRhinehartOptions {
  /** Filter factor of the value; default 0.2 (Cao and Rhinehart 1995). */
  readonly lambda1?: number;
  /** Filter factor of the squared deviation; default 0.1. */
  readonly lambda2?: number;
  /** Filter factor of the squared successive difference; default 0.1. */
  readonly lambda3?: number;
  /** Critical R; R above it means transient; default 2. */
  readonly rCrit?: number;
  /** Points after the start (and after each gap) treated as warm-up; default 20. */
  readonly warmup?: number;
  /** Samples added on each side of a transient run (see module comment); default 2. */
  readonly padPoints?: number;
}

export interface SlopeSpreadOptions {
  /** Trailing window [points], at least 3. */
  readonly window: number;
  /** Largest |slope| x window duration allowed [SI of the tag]. */
  readonly maxChange: number;
  /** Largest residual standard deviation allowed [SI of the tag]. */
  readonly maxSpread: number;
}

export interface SteadyTagInput {
  readonly role: string;
  /** Values on the grid [SI]; NaN = missing or invalid. */
  readonly value: ArrayLike<number>;
  readonly cao?: CaoRhinehartOptions;
  readonly slopeSpread?: SlopeSpreadOptions;
}

export interface SteadyTagResult {
  readonly role: string;
  /** R-statistic per point (NaN during warm-up and at missing values). */
  readonly r: Float64Array;
  /** 1 = steady by every configured test. */
  readonly steady: Uint8Array;
}

export interface SteadyStateResult {
  readonly tags: ReadonlyMap<string, SteadyTagResult>;
  /** 1 where every key tag is steady (and, when `valid` was given, the point is valid). */
  readonly steady: Uint8Array;
  /** Count of steady points. */
  readonly steadyCount: number;
}

/** R-statistic of Cao and Rhinehart (1995) for one series; NaN during warm-up and at NaN values. */
export function caoRhinehartR(x: ArrayLike<number>, options: CaoRhinehartOptions = {}): Float64Array {
  const l1 = options.lambda1 ?? 0.2;
  const l2 = options.lambda2 ?? 0.1;
  const l3 = options.lambda3 ?? 0.1;
  const warmup = options.warmup ?? 20;
  for (const [name, v] of [
    ['lambda1', l1],
    ['lambda2', l2],
    ['lambda3', l3],
  ] as const)
    if (!(v > 0 && v <= 1)) throw new MonitorBadInputError(name, v, 'must lie in (0, 1]');
  if (!(Number.isInteger(warmup) && warmup >= 1))
    throw new MonitorBadInputError('warmup', warmup, 'integer >= 1');
  const n = x.length;
  const r = new Float64Array(n).fill(Number.NaN);
  let xf = Number.NaN;
  let prev = Number.NaN;
  let v2 = 0;
  let d2 = 0;
  let seen = 0; // points since the last (re)start of the filters
  for (let i = 0; i < n; i++) {
    const xi = x[i] as number;
    if (!Number.isFinite(xi)) {
      // A gap restarts the filters: the state before it says nothing certain about after it.
      seen = 0;
      xf = Number.NaN;
      continue;
    }
    if (seen === 0) {
      xf = xi;
      prev = xi;
      v2 = 0;
      d2 = 0;
      seen = 1;
      continue;
    }
    const dev = xi - xf; // uses X_f,i-1, as in the published equations
    v2 = l2 * dev * dev + (1 - l2) * v2;
    const diff = xi - prev;
    d2 = l3 * diff * diff + (1 - l3) * d2;
    xf = l1 * xi + (1 - l1) * xf;
    prev = xi;
    seen++;
    if (seen > warmup) r[i] = d2 > 0 ? ((2 - l1) * v2) / d2 : v2 > 0 ? Number.POSITIVE_INFINITY : 1;
  }
  return r;
}

/** Windowed slope-and-spread test: 1 where the trailing window passes. */
export function slopeSpreadSteady(
  x: ArrayLike<number>,
  t: ArrayLike<number>,
  options: SlopeSpreadOptions,
): Uint8Array {
  const { window: w, maxChange, maxSpread } = options;
  if (!(Number.isInteger(w) && w >= 3))
    throw new MonitorBadInputError('slopeSpread.window', w, 'integer >= 3');
  const n = x.length;
  if (t.length !== n) throw new LengthMismatchError('slopeSpread.t', n, t.length);
  const out = new Uint8Array(n);
  for (let i = w - 1; i < n; i++) {
    // Direct sums per window: w is small (tens of points) and this stays exact enough.
    let m = 0;
    let st = 0;
    let sx = 0;
    const t0 = t[i - w + 1] as number;
    for (let j = i - w + 1; j <= i; j++) {
      const v = x[j] as number;
      if (!Number.isFinite(v)) continue;
      m++;
      st += (t[j] as number) - t0;
      sx += v;
    }
    if (m < w) continue; // a gap in the window: not shown to be steady
    const tm = st / m;
    const xm = sx / m;
    let stt = 0;
    let stx = 0;
    for (let j = i - w + 1; j <= i; j++) {
      const dt = (t[j] as number) - t0 - tm;
      stt += dt * dt;
      stx += dt * ((x[j] as number) - xm);
    }
    const slope = stt > 0 ? stx / stt : 0;
    let sse = 0;
    for (let j = i - w + 1; j <= i; j++) {
      const e = (x[j] as number) - xm - slope * ((t[j] as number) - t0 - tm);
      sse += e * e;
    }
    const spread = Math.sqrt(sse / (m - 2));
    const change = Math.abs(slope) * ((t[i] as number) - t0);
    if (change <= maxChange && spread <= maxSpread) out[i] = 1;
  }
  return out;
}

/** Widen each transient run (R above critical, not warm-up or gap) by `pad` samples both ways. */
function padTransients(steady: Uint8Array, r: Float64Array, pad: number): void {
  if (!(Number.isInteger(pad) && pad >= 0)) throw new MonitorBadInputError('padPoints', pad, 'integer >= 0');
  if (pad === 0) return;
  const n = steady.length;
  const transient = new Uint8Array(n);
  for (let i = 0; i < n; i++) if (steady[i] === 0 && Number.isFinite(r[i] as number)) transient[i] = 1;
  for (let i = 0; i < n; i++) {
    if (transient[i] === 0) continue;
    for (let j = Math.max(0, i - pad); j <= Math.min(n - 1, i + pad); j++) steady[j] = 0;
  }
}

/**
 * Steady-state per key tag and for the machine. `t` is needed only for the slope-and-spread test;
 * `valid` (1 = usable, from validation) removes invalid points from the machine's steady set.
 */
export function detectSteadyState(
  tags: readonly SteadyTagInput[],
  options: { readonly t?: ArrayLike<number>; readonly valid?: ArrayLike<number> } = {},
): SteadyStateResult {
  if (tags.length === 0) throw new MonitorBadInputError('tags', 0, 'at least one key tag is needed');
  const n = (tags[0] as SteadyTagInput).value.length;
  const machine = new Uint8Array(n).fill(1);
  const out = new Map<string, SteadyTagResult>();
  for (const tag of tags) {
    if (tag.value.length !== n) throw new LengthMismatchError(`${tag.role}.value`, n, tag.value.length);
    const rCrit = tag.cao?.rCrit ?? 2;
    if (!(rCrit > 0)) throw new MonitorBadInputError('rCrit', rCrit, 'must be positive');
    const r = caoRhinehartR(tag.value, tag.cao);
    const steady = new Uint8Array(n);
    for (let i = 0; i < n; i++) steady[i] = (r[i] as number) <= rCrit ? 1 : 0; // NaN compares false
    padTransients(steady, r, tag.cao?.padPoints ?? 2);
    if (tag.slopeSpread !== undefined) {
      if (options.t === undefined)
        throw new MonitorBadInputError('t', undefined, 'slope-and-spread test needs times');
      const ss = slopeSpreadSteady(tag.value, options.t, tag.slopeSpread);
      for (let i = 0; i < n; i++) steady[i] = (steady[i] as number) & (ss[i] as number);
    }
    for (let i = 0; i < n; i++) machine[i] = (machine[i] as number) & (steady[i] as number);
    out.set(tag.role, { role: tag.role, r, steady });
  }
  const valid = options.valid;
  if (valid !== undefined) {
    if (valid.length !== n) throw new LengthMismatchError('valid', n, valid.length);
    for (let i = 0; i < n; i++) if (!valid[i]) machine[i] = 0;
  }
  let steadyCount = 0;
  for (let i = 0; i < n; i++) steadyCount += machine[i] as number;
  return { tags: out, steady: machine, steadyCount };
}
