import { describe, expect, it } from 'vitest';
import { percentileCont } from './aggregate.js';
import { cutBlocks, DAY_US } from './block-rows.js';
import type { UsColumns } from './columns.js';
import { mergeRowsIntoColumns, sameBits } from './merge.js';

const block: UsColumns = {
  times: Float64Array.from([1000_000, 2000_000, 4000_000]), // [µs]: 1 s, 2 s, 4 s
  values: Float64Array.from([1.5, -0, 7]),
  qualities: Int16Array.from([192, 192, 64]),
};

describe('mergeRowsIntoColumns (first stored value kept, as write-outcomes.ts states it)', () => {
  it('inserts new keys in time order and counts duplicates and conflicts', () => {
    const m = mergeRowsIntoColumns(block, [
      { tagId: 1, time: 500, value: 9, quality: 192 }, // new, before the first
      { tagId: 1, time: 1000, value: 1.5, quality: 192 }, // duplicate
      { tagId: 1, time: 2000, value: 0, quality: 192, ref: 7 }, // conflict: +0 against the stored -0
      { tagId: 1, time: 3000, value: 3, quality: 0 }, // new, between
      { tagId: 1, time: 3000, value: 3, quality: 0 }, // repeat of the new key: duplicate
      { tagId: 1, time: 3000, value: 4, quality: 0 }, // repeat with another value: conflict
      { tagId: 1, time: 4000, value: 7, quality: 192 }, // conflict: quality differs
    ]);
    expect([...m.columns.times]).toEqual([500_000, 1000_000, 2000_000, 3000_000, 4000_000]);
    expect([...m.columns.values].map((v) => Object.is(v, -0))).toEqual([false, false, true, false, false]);
    expect([...m.columns.qualities]).toEqual([192, 192, 192, 0, 64]);
    expect(m.stored.map((r) => r.time)).toEqual([500, 3000]);
    expect(m.duplicates).toBe(2);
    expect(m.conflicts).toEqual([
      { tagId: 1, time: 2000, value: 0, quality: 192, storedValue: -0, storedQuality: 192, ref: 7 },
      { tagId: 1, time: 3000, value: 4, quality: 0, storedValue: 3, storedQuality: 0 },
      { tagId: 1, time: 4000, value: 7, quality: 192, storedValue: 7, storedQuality: 64 },
    ]);
  });

  it('tells values apart bit for bit', () => {
    expect(sameBits(0, -0)).toBe(false);
    expect(sameBits(Number.NaN, Number.NaN)).toBe(true);
    expect(sameBits(0.1 + 0.2, 0.3)).toBe(false);
  });
});

describe('cutBlocks', () => {
  it('cuts at UTC day boundaries and at the sample cap', () => {
    const t0 = 20_000 * DAY_US;
    const times = Float64Array.from([t0 - 2, t0 - 1, t0, t0 + 1, t0 + 2, t0 + 3, t0 + DAY_US]);
    const c = { times, values: new Float64Array(times.length), qualities: new Int16Array(times.length) };
    expect(cutBlocks(c, 3).map((b) => [...b.times])).toEqual([
      [t0 - 2, t0 - 1],
      [t0, t0 + 1, t0 + 2],
      [t0 + 3],
      [t0 + DAY_US],
    ]);
  });
});

describe('percentileCont', () => {
  it('interpolates as PostgreSQL does (documentation, Aggregate Functions, percentile_cont)', () => {
    // Median of 1, 2, 3, 10 is (2 + 3) / 2; of 5, 1, 3 it is 3 (definition of the median).
    expect(percentileCont([1, 2, 3, 10], 0.5)).toBe(2.5);
    expect(percentileCont([5, 1, 3], 0.5)).toBe(3);
    expect(percentileCont([], 0.5)).toBeUndefined();
  });
});
