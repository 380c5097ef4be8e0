/**
 * Aggregates over a read series (pure), computed as the SQL they replace computed them over
 * rows in time order: min, max, sum and count per bucket, the last sample per bucket, and
 * percentile_cont.
 */
import type { SeriesColumns } from './columns.js';

export interface SeriesBucket {
  readonly index: number;
  readonly min: number;
  readonly max: number;
  /** Summed in time order. */
  readonly sum: number;
  readonly count: number;
  readonly last: number;
  /** [ms] */
  readonly lastTime: number;
}

/**
 * Buckets of a series; `bucketOf` gives a sample's bucket index from its time [ms] (the
 * caller's formula, so it matches the SQL it replaces). Times are sorted, so buckets come in
 * order and each is contiguous.
 */
export function bucketSeries(s: SeriesColumns, bucketOf: (ms: number) => number): SeriesBucket[] {
  const out: SeriesBucket[] = [];
  const { times, values } = s;
  let i = 0;
  while (i < times.length) {
    const b = bucketOf(times[i] as number);
    let min = values[i] as number;
    let max = min;
    let sum = 0;
    let j = i;
    for (; j < times.length; j++) {
      if (j > i && bucketOf(times[j] as number) !== b) break;
      const v = values[j] as number;
      if (v < min) min = v;
      if (v > max) max = v;
      sum += v;
    }
    out.push({
      index: b,
      min,
      max,
      sum,
      count: j - i,
      last: values[j - 1] as number,
      lastTime: times[j - 1] as number,
    });
    i = j;
  }
  return out;
}

/**
 * percentile_cont(fraction) WITHIN GROUP (ORDER BY value) as PostgreSQL 15 computes it
 * (src/backend/utils/adt/orderedsetaggs.c: the rows at floor and ceil of fraction * (n - 1),
 * interpolated as first + (second - first) * (row - floor)); undefined for no values.
 */
export function percentileCont(values: ArrayLike<number>, fraction: number): number | undefined {
  const n = values.length;
  if (n === 0) return undefined;
  const sorted = Float64Array.from(values).sort();
  const row = fraction * (n - 1);
  const lo = Math.floor(row);
  const hi = Math.ceil(row);
  const first = sorted[lo] as number;
  if (lo === hi) return first;
  const second = sorted[hi] as number;
  return first + (second - first) * (row - lo);
}
