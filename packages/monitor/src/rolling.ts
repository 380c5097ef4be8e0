/**
 * Rolling windows of efficiency, specific work and power over steady, valid points.
 *
 * Uncertainty of a window mean (GUM, JCGM 100:2008, applied to a mean of correlated inputs):
 * the systematic part of each point's uncertainty (calibration of the same transmitters) is fully
 * correlated from point to point and does not average down; the random part does. We take the
 * random part from the observed scatter, which already contains the transmitters' noise and the
 * process's own variation:
 *   u_mean^2 = u_sys^2 + s^2 / n,
 * with u_sys the mean of the per-point systematic standard uncertainties (the uncertainty of a
 * mean of fully correlated errors) and s the sample standard deviation of the efficiency over the
 * n points used. With a single point the scatter is unknown, and the point's own random standard
 * uncertainty (uRandom, when given) stands in for s.
 */
import { LengthMismatchError, MonitorBadInputError } from './errors.js';

export interface RollingInput {
  /** Grid times [ms], non-decreasing. */
  readonly t: ArrayLike<number>;
  /** Efficiency per point [-] (fraction, 0.85 = 85 %); NaN where not computed. */
  readonly efficiency: ArrayLike<number>;
  /** Systematic standard uncertainty of each point's efficiency [-]. */
  readonly uSys: ArrayLike<number>;
  /** Random standard uncertainty of each point's efficiency [-]; used only when n = 1. */
  readonly uRandom?: ArrayLike<number>;
  /** Specific work per point [J/kg]. */
  readonly specificWork?: ArrayLike<number>;
  /** Power per point [W]. */
  readonly power?: ArrayLike<number>;
  /** Operating point per point (load fraction, mass flow or pressure ratio), for the baseline. */
  readonly operatingPoint?: ArrayLike<number>;
  /** 1 where the point is steady and valid; others are left out. */
  readonly use: ArrayLike<number>;
}

export interface WindowStats {
  /** Window end [ms], exclusive: the window is [endMs - lengthMs, endMs). */
  readonly endMs: number;
  readonly lengthMs: number;
  /** Points used (steady, valid, with a finite efficiency). */
  readonly n: number;
  /** n over the number of grid points the window holds (lengthMs / stepMs). */
  readonly coverage: number;
  /** Mean efficiency [-]; NaN when n = 0. */
  readonly efficiency: number;
  /** Standard uncertainty of the mean efficiency [-] (see module comment). */
  readonly uEfficiency: number;
  /** Sample standard deviation of efficiency over the window [-]; NaN when n < 2. */
  readonly sEfficiency: number;
  /** Mean systematic standard uncertainty [-]. */
  readonly uSys: number;
  /** Mean specific work [J/kg] (NaN when not given). */
  readonly specificWork: number;
  /** Mean power [W] (NaN when not given). */
  readonly power: number;
  /** Mean operating point (NaN when not given). */
  readonly operatingPoint: number;
}

/** Default rolling windows: 1 hour, 24 hours, 7 days [ms]. */
export const DEFAULT_WINDOWS_MS: readonly number[] = [3_600_000, 86_400_000, 7 * 86_400_000];

function check(input: RollingInput): number {
  const n = input.t.length;
  const arrays: [string, ArrayLike<number> | undefined][] = [
    ['efficiency', input.efficiency],
    ['uSys', input.uSys],
    ['uRandom', input.uRandom],
    ['specificWork', input.specificWork],
    ['power', input.power],
    ['operatingPoint', input.operatingPoint],
    ['use', input.use],
  ];
  for (const [name, a] of arrays)
    if (a !== undefined && a.length !== n) throw new LengthMismatchError(name, n, a.length);
  return n;
}

/**
 * Statistics over the points with startIdx <= i < endIdx (indices into the input), for a window
 * that holds `slots` grid points.
 */
function statsOver(
  input: RollingInput,
  startIdx: number,
  endIdx: number,
  endMs: number,
  lengthMs: number,
  slots: number,
): WindowStats {
  let n = 0;
  let se = 0;
  let su = 0;
  let sw = 0;
  let nw = 0;
  let sp = 0;
  let np = 0;
  let so = 0;
  let no = 0;
  let shift = Number.NaN;
  let sd = 0;
  let sd2 = 0;
  let uRandOnly = Number.NaN;
  for (let i = startIdx; i < endIdx; i++) {
    if (!input.use[i]) continue;
    const e = input.efficiency[i] as number;
    if (!Number.isFinite(e)) continue;
    if (Number.isNaN(shift)) shift = e;
    n++;
    se += e;
    sd += e - shift;
    sd2 += (e - shift) * (e - shift);
    su += input.uSys[i] as number;
    if (input.uRandom !== undefined) uRandOnly = input.uRandom[i] as number;
    const w = input.specificWork?.[i];
    if (w !== undefined && Number.isFinite(w)) {
      sw += w;
      nw++;
    }
    const p = input.power?.[i];
    if (p !== undefined && Number.isFinite(p)) {
      sp += p;
      np++;
    }
    const o = input.operatingPoint?.[i];
    if (o !== undefined && Number.isFinite(o)) {
      so += o;
      no++;
    }
  }
  const mean = n > 0 ? se / n : Number.NaN;
  const s = n >= 2 ? Math.sqrt(Math.max(0, (sd2 - (sd * sd) / n) / (n - 1))) : Number.NaN;
  const uSys = n > 0 ? su / n : Number.NaN;
  const randomPart = n >= 2 ? (s * s) / n : n === 1 ? uRandOnly * uRandOnly : Number.NaN;
  // With n = 1 and no uRandom the random part is unknown: report NaN rather than understate it.
  const uEfficiency = Math.sqrt(uSys * uSys + randomPart);
  return {
    endMs,
    lengthMs,
    n,
    coverage: slots > 0 ? n / slots : 0,
    efficiency: mean,
    uEfficiency,
    sEfficiency: s,
    uSys,
    specificWork: nw > 0 ? sw / nw : Number.NaN,
    power: np > 0 ? sp / np : Number.NaN,
    operatingPoint: no > 0 ? so / no : Number.NaN,
  };
}

/** First index with t >= x (binary search on sorted t). */
function lowerBound(t: ArrayLike<number>, x: number): number {
  let lo = 0;
  let hi = t.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if ((t[mid] as number) < x) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/**
 * Trailing windows ending at `endMs` (exclusive), one per length (default 1 h, 24 h, 7 d).
 * `stepMs` is the grid step, used for the coverage fraction.
 */
export function rollingWindows(
  input: RollingInput,
  endMs: number,
  stepMs: number,
  windowsMs: readonly number[] = DEFAULT_WINDOWS_MS,
): WindowStats[] {
  check(input);
  if (!(stepMs > 0)) throw new MonitorBadInputError('stepMs', stepMs, 'must be positive');
  const endIdx = lowerBound(input.t, endMs);
  return windowsMs.map((len) => {
    if (!(len > 0)) throw new MonitorBadInputError('windowMs', len, 'must be positive');
    const startIdx = lowerBound(input.t, endMs - len);
    return statsOver(input, startIdx, endIdx, endMs, len, Math.round(len / stepMs));
  });
}

/**
 * Consecutive, non-overlapping buckets [originMs + k bucketMs, originMs + (k+1) bucketMs) covering
 * the data (e.g. daily means for the degradation rate). Empty buckets are returned with n = 0.
 */
export function bucketStats(
  input: RollingInput,
  bucketMs: number,
  originMs: number,
  stepMs: number,
): WindowStats[] {
  const n = check(input);
  if (!(bucketMs > 0)) throw new MonitorBadInputError('bucketMs', bucketMs, 'must be positive');
  if (!(stepMs > 0)) throw new MonitorBadInputError('stepMs', stepMs, 'must be positive');
  if (n === 0) return [];
  const first = Math.floor(((input.t[0] as number) - originMs) / bucketMs);
  const last = Math.floor(((input.t[n - 1] as number) - originMs) / bucketMs);
  const out: WindowStats[] = [];
  let idx = lowerBound(input.t, originMs + first * bucketMs);
  for (let k = first; k <= last; k++) {
    const end = originMs + (k + 1) * bucketMs;
    const endIdx = lowerBound(input.t, end);
    out.push(statsOver(input, idx, endIdx, end, bucketMs, Math.round(bucketMs / stepMs)));
    idx = endIdx;
  }
  return out;
}
