import { describe, expect, it } from 'vitest';
import { mergeRanges } from './job.js';

describe('mergeRanges', () => {
  it('joins overlapping and touching ranges and keeps gaps, oldest first', () => {
    expect(
      mergeRanges([
        [50, 60],
        [0, 10],
        [5, 20],
        [20, 30],
        [40, 45],
      ]),
    ).toEqual([
      [0, 30],
      [40, 45],
      [50, 60],
    ]);
  });

  it('a range inside another adds nothing; none gives none', () => {
    expect(
      mergeRanges([
        [0, 100],
        [10, 20],
      ]),
    ).toEqual([[0, 100]]);
    expect(mergeRanges([])).toEqual([]);
  });
});
