/**
 * Alignment: a machine's tags, each sampled on its own clock, brought onto one time grid.
 *
 * Method (common practice for historians, no single source): each good sample holds its value
 * (sample-and-hold, "zero-order hold") from its time until the next sample of that tag or until
 * `maxAgeMs` has passed, whichever comes first. The value of a grid interval is the time-weighted
 * mean of that held signal over the part of the interval that is covered; the coverage fraction is
 * that covered part over the interval length. A bad-quality sample is excluded and counted, and it
 * ends the hold of the sample before it: the source told us the value is not known from then on.
 *
 * Grid point i stands for the interval [t[i], t[i] + stepMs): the label is the interval start.
 * Arrays are typed (Float64Array etc.) so a year of 1-minute data for a machine stays cheap.
 */
import { LengthMismatchError, MonitorBadInputError, UnsortedTimesError } from './errors.js';

/** Quality of a raw sample as the source reported it. */
export type Quality = 'good' | 'uncertain' | 'bad';

/** Numeric quality codes used in the columnar form. */
export const QUALITY_GOOD = 0;
export const QUALITY_UNCERTAIN = 1;
export const QUALITY_BAD = 2;

/** One raw sample: time [ms since epoch, UTC], value in SI, source quality. */
export interface Sample {
  readonly t: number;
  readonly value: number;
  readonly quality: Quality;
}

/**
 * One tag's samples in columnar form, sorted by time. `quality` holds QUALITY_* codes; when it
 * is omitted every sample is good. A non-finite value is treated as a bad sample.
 */
export interface TagColumns {
  /** The tag's role on the machine (e.g. "p_in", "T_out", "flow", "power"). */
  readonly role: string;
  /** Sample times [ms since epoch], non-decreasing. */
  readonly t: ArrayLike<number>;
  /** Sample values [SI unit of the role]. */
  readonly value: ArrayLike<number>;
  readonly quality?: ArrayLike<number>;
}

/** Per-tag, per-grid-point flags (bit mask). */
export const ALIGN_MISSING = 1; // coverage below minCoverage: value is NaN
export const ALIGN_STALE = 2; // no good sample newer than maxAgeMs at the interval end
export const ALIGN_BAD_EXCLUDED = 4; // bad-quality samples fell in the interval and were excluded
export const ALIGN_UNCERTAIN = 8; // an uncertain-quality sample contributed to the value
export const ALIGN_PARTIAL = 16; // 0 < coverage < 1

export interface AlignOptions {
  /** Grid start [ms], inclusive. */
  readonly startMs: number;
  /** Grid end [ms], exclusive; the last interval is the one starting before endMs. */
  readonly endMs: number;
  /** Grid step [ms]; default 60 000 (one minute). */
  readonly stepMs?: number;
  /** Longest time a sample's value holds [ms]; default 5 x stepMs. */
  readonly maxAgeMs?: number;
  /** Coverage fraction below which a grid point is missing for that tag; default 0.5. */
  readonly minCoverage?: number;
  /** Use uncertain-quality samples (flagged) instead of excluding them; default true. */
  readonly acceptUncertain?: boolean;
}

export interface AlignedTag {
  readonly role: string;
  /** Time-weighted mean per grid point [SI]; NaN where missing. */
  readonly value: Float64Array;
  /** Covered fraction of each interval, 0..1. */
  readonly coverage: Float32Array;
  /** ALIGN_* bit mask per grid point. */
  readonly flags: Uint8Array;
  /** Bad-quality samples excluded, per grid point (samples before the grid are not counted). */
  readonly badCount: Uint32Array;
  /** Bad-quality samples excluded in total within the grid. */
  readonly badTotal: number;
}

export interface Aligned {
  /** Interval start of each grid point [ms]. */
  readonly t: Float64Array;
  readonly stepMs: number;
  readonly roles: readonly string[];
  readonly tags: ReadonlyMap<string, AlignedTag>;
  /** Smallest coverage over all tags at each grid point (0..1). */
  readonly coverage: Float32Array;
}

const QUALITY_CODE: Readonly<Record<Quality, number>> = {
  good: QUALITY_GOOD,
  uncertain: QUALITY_UNCERTAIN,
  bad: QUALITY_BAD,
};

/** Convert a tag's samples from objects to the columnar form `alignTags` takes. */
export function toColumns(role: string, samples: readonly Sample[]): TagColumns {
  const n = samples.length;
  const t = new Float64Array(n);
  const value = new Float64Array(n);
  const quality = new Uint8Array(n);
  for (let i = 0; i < n; i++) {
    const s = samples[i] as Sample;
    t[i] = s.t;
    value[i] = s.value;
    quality[i] = QUALITY_CODE[s.quality];
  }
  return { role, t, value, quality };
}

/** Bring every tag onto the common grid (see the module comment for the method). */
export function alignTags(tags: readonly TagColumns[], options: AlignOptions): Aligned {
  const stepMs = options.stepMs ?? 60_000;
  const maxAgeMs = options.maxAgeMs ?? 5 * stepMs;
  const minCoverage = options.minCoverage ?? 0.5;
  const acceptUncertain = options.acceptUncertain ?? true;
  const { startMs, endMs } = options;
  if (!(stepMs > 0)) throw new MonitorBadInputError('stepMs', stepMs, 'must be positive');
  if (!(maxAgeMs > 0)) throw new MonitorBadInputError('maxAgeMs', maxAgeMs, 'must be positive');
  if (!(minCoverage >= 0 && minCoverage <= 1))
    throw new MonitorBadInputError('minCoverage', minCoverage, 'must lie in 0..1');
  if (!Number.isFinite(startMs) || !Number.isFinite(endMs) || !(endMs > startMs))
    throw new MonitorBadInputError('endMs', endMs, `must be finite and after startMs = ${startMs}`);
  const roles = tags.map((tag) => tag.role);
  if (new Set(roles).size !== roles.length)
    throw new MonitorBadInputError('roles', roles.join(','), 'duplicate role');

  const n = Math.ceil((endMs - startMs) / stepMs);
  const t = new Float64Array(n);
  for (let i = 0; i < n; i++) t[i] = startMs + i * stepMs;
  const gridEnd = startMs + n * stepMs;
  const coverageAll = new Float32Array(n).fill(1);
  const out = new Map<string, AlignedTag>();
  for (const tag of tags) {
    const aligned = alignOne(tag, startMs, gridEnd, stepMs, n, maxAgeMs, minCoverage, acceptUncertain);
    out.set(tag.role, aligned);
    for (let i = 0; i < n; i++) {
      const c = aligned.coverage[i] as number;
      if (c < (coverageAll[i] as number)) coverageAll[i] = c;
    }
  }
  if (tags.length === 0) coverageAll.fill(0);
  return { t, stepMs, roles, tags: out, coverage: coverageAll };
}

function alignOne(
  tag: TagColumns,
  startMs: number,
  gridEnd: number,
  stepMs: number,
  n: number,
  maxAgeMs: number,
  minCoverage: number,
  acceptUncertain: boolean,
): AlignedTag {
  const m = tag.t.length;
  if (tag.value.length !== m) throw new LengthMismatchError(`${tag.role}.value`, m, tag.value.length);
  if (tag.quality !== undefined && tag.quality.length !== m)
    throw new LengthMismatchError(`${tag.role}.quality`, m, tag.quality.length);
  // Typed copies keep the hot loop monomorphic whatever array type the caller passed.
  const tt = tag.t instanceof Float64Array ? tag.t : Float64Array.from(tag.t);
  const vv = tag.value instanceof Float64Array ? tag.value : Float64Array.from(tag.value);
  const q =
    tag.quality === undefined
      ? undefined
      : tag.quality instanceof Uint8Array
        ? tag.quality
        : Uint8Array.from(tag.quality);
  const sum = new Float64Array(n); // integral of value dt over covered time [SI x ms]
  const covered = new Float64Array(n); // covered time [ms]
  const flags = new Uint8Array(n);
  const badCount = new Uint32Array(n);
  // Newest good-sample time at or before each interval end, for the stale test.
  const lastGood = new Float64Array(n).fill(Number.NEGATIVE_INFINITY);
  let badTotal = 0;
  let prevT = Number.NEGATIVE_INFINITY;

  for (let k = 0; k < m; k++) {
    const tk = tt[k] as number;
    if (!(tk >= prevT)) throw new UnsortedTimesError(tag.role, k, prevT, tk);
    prevT = tk;
    const vk = vv[k] as number;
    const qk = q === undefined ? QUALITY_GOOD : (q[k] as number);
    const isBad =
      qk === QUALITY_BAD || (qk === QUALITY_UNCERTAIN && !acceptUncertain) || !Number.isFinite(vk);
    const iAt = Math.floor((tk - startMs) / stepMs);
    if (isBad) {
      if (iAt >= 0 && iAt < n) {
        badTotal++;
        badCount[iAt] = (badCount[iAt] as number) + 1;
        flags[iAt] = (flags[iAt] as number) | ALIGN_BAD_EXCLUDED;
      }
      continue;
    }
    if (iAt >= 0 && iAt < n && tk > (lastGood[iAt] as number)) lastGood[iAt] = tk;
    // The hold ends at the next sample (of any quality), after maxAge, or at the grid end.
    const next = k + 1 < m ? (tt[k + 1] as number) : Number.POSITIVE_INFINITY;
    let a = Math.max(tk, startMs);
    const b = Math.min(next, tk + maxAgeMs, gridEnd);
    if (!(b > a)) continue;
    let i = Math.floor((a - startMs) / stepMs);
    while (a < b && i < n) {
      const intervalEnd = startMs + (i + 1) * stepMs;
      const segEnd = Math.min(b, intervalEnd);
      const dt = segEnd - a;
      sum[i] = (sum[i] as number) + vk * dt;
      covered[i] = (covered[i] as number) + dt;
      if (qk === QUALITY_UNCERTAIN) flags[i] = (flags[i] as number) | ALIGN_UNCERTAIN;
      a = segEnd;
      i++;
    }
  }

  // Samples before the grid may still be the newest good value at the first interval end.
  let newestBefore = Number.NEGATIVE_INFINITY;
  for (let k = 0; k < m; k++) {
    const tk = tt[k] as number;
    if (tk >= startMs) break;
    const qk = q === undefined ? QUALITY_GOOD : (q[k] as number);
    const vk = vv[k] as number;
    if (qk === QUALITY_GOOD || (qk === QUALITY_UNCERTAIN && acceptUncertain))
      if (Number.isFinite(vk)) newestBefore = tk;
  }

  const value = new Float64Array(n);
  const coverage = new Float32Array(n);
  let newest = newestBefore;
  for (let i = 0; i < n; i++) {
    const lg = lastGood[i] as number;
    if (lg > newest) newest = lg;
    const intervalEnd = startMs + (i + 1) * stepMs;
    let f = flags[i] as number;
    if (intervalEnd - newest > maxAgeMs) f |= ALIGN_STALE;
    const c = (covered[i] as number) / stepMs;
    coverage[i] = c;
    if (c > 0 && c < 1) f |= ALIGN_PARTIAL;
    if (c > 0 && c >= minCoverage) value[i] = (sum[i] as number) / (covered[i] as number);
    else {
      value[i] = Number.NaN;
      f |= ALIGN_MISSING;
    }
    flags[i] = f;
  }
  return { role: tag.role, value, coverage, flags, badCount, badTotal };
}
