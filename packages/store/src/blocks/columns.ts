/**
 * Columns of one tag's samples as the blocks code moves them: times as integer microseconds
 * since the Unix epoch (the codec's unit, and PostgreSQL's timestamptz resolution, so a
 * block keeps a time exactly as the hot table held it), values and qualities as stored.
 */
import { PG_EPOCH_MS } from '../copy-binary.js';

export interface UsColumns {
  /** [µs since the Unix epoch], integers. */
  readonly times: Float64Array;
  readonly values: Float64Array;
  readonly qualities: Int16Array;
}

/** One tag's series as readers get it: times [ms since the Unix epoch], sorted. */
export interface SeriesColumns {
  readonly times: Float64Array;
  readonly values: Float64Array;
  readonly qualities: Int16Array;
}

/** PostgreSQL's epoch (2000-01-01 UTC) [µs since the Unix epoch]. */
export const PG_EPOCH_US = PG_EPOCH_MS * 1000;

/**
 * [µs since the Unix epoch] to [ms], in the same arithmetic as readCopyTime (µs since 2000
 * divided by 1000, plus the epoch in ms), so a time read from a block and the same time read
 * from the hot table are the same double, bit for bit.
 */
export function usToMs(us: number): number {
  return (us - PG_EPOCH_US) / 1000 + PG_EPOCH_MS;
}

export const EMPTY_COLUMNS: UsColumns = {
  times: new Float64Array(0),
  values: new Float64Array(0),
  qualities: new Int16Array(0),
};

/** Index of the first time >= t in sorted times (times.length when none). */
export function lowerBound(times: Float64Array, t: number): number {
  let lo = 0;
  let hi = times.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if ((times[mid] as number) < t) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/** The samples with fromUs <= time < toUs (views, no copy). */
export function clip(c: UsColumns, fromUs: number, toUs: number): UsColumns {
  const a = lowerBound(c.times, fromUs);
  const b = lowerBound(c.times, toUs);
  if (a === 0 && b === c.times.length) return c;
  return {
    times: c.times.subarray(a, b),
    values: c.values.subarray(a, b),
    qualities: c.qualities.subarray(a, b),
  };
}

/** The columns themselves when already in time order (the usual case), else a sorted copy. */
export function sortedByTime(c: UsColumns): UsColumns {
  const t = c.times;
  let ordered = true;
  for (let i = 1; i < t.length && ordered; i++) ordered = (t[i] as number) >= (t[i - 1] as number);
  if (ordered) return c;
  const idx = Array.from({ length: t.length }, (_, i) => i).sort(
    (i, j) => (t[i] as number) - (t[j] as number),
  );
  return {
    times: Float64Array.from(idx, (i) => t[i] as number),
    values: Float64Array.from(idx, (i) => c.values[i] as number),
    qualities: Int16Array.from(idx, (i) => c.qualities[i] as number),
  };
}

/** Concatenation of time-ordered, non-overlapping parts given in time order. */
export function concatColumns(parts: readonly UsColumns[]): UsColumns {
  if (parts.length === 1) return parts[0]!;
  let n = 0;
  for (const p of parts) n += p.times.length;
  const out = { times: new Float64Array(n), values: new Float64Array(n), qualities: new Int16Array(n) };
  let o = 0;
  for (const p of parts) {
    out.times.set(p.times, o);
    out.values.set(p.values, o);
    out.qualities.set(p.qualities, o);
    o += p.times.length;
  }
  return out;
}

/**
 * Two time-ordered series with no time in common (a key lives in the hot table or in a
 * block, never both) merged into one ordered series.
 */
export function mergeDisjoint(a: UsColumns, b: UsColumns): UsColumns {
  if (a.times.length === 0) return b;
  if (b.times.length === 0) return a;
  const n = a.times.length + b.times.length;
  const out = { times: new Float64Array(n), values: new Float64Array(n), qualities: new Int16Array(n) };
  let i = 0;
  let j = 0;
  for (let k = 0; k < n; k++) {
    const takeA =
      j >= b.times.length || (i < a.times.length && (a.times[i] as number) <= (b.times[j] as number));
    const src = takeA ? a : b;
    const s = takeA ? i++ : j++;
    out.times[k] = src.times[s] as number;
    out.values[k] = src.values[s] as number;
    out.qualities[k] = src.qualities[s] as number;
  }
  return out;
}

/** The series with times in [ms], for readers. */
export function toSeries(c: UsColumns): SeriesColumns {
  const times = new Float64Array(c.times.length);
  for (let i = 0; i < times.length; i++) times[i] = usToMs(c.times[i] as number);
  return { times, values: c.values, qualities: c.qualities };
}
