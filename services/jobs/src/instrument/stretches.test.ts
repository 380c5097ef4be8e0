import { describe, expect, it } from 'vitest';
import { uniformStretches } from './gauge-absolute.js';

describe('uniformStretches', () => {
  it('splits a history on a 15-minute grid followed by a 1-minute grid (common practice, no source)', () => {
    const t = [0, 900, 1800, 2700, 2760, 2820, 2880];
    expect(uniformStretches(t)).toEqual([
      [0, 4, 900],
      [3, 7, 60],
    ]);
  });

  it('gives one run for one grid, and nothing for fewer than two times', () => {
    expect(uniformStretches([0, 60, 120])).toEqual([[0, 3, 60]]);
    expect(uniformStretches([5])).toEqual([]);
  });
});
