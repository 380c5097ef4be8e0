import { describe, expect, it } from 'vitest';
import { gridRangesFrom, uniformStretches } from './instrument.js';

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

describe('gridRangesFrom', () => {
  it('gives each grid its own range, the shared boundary point to the later grid (common practice, no source)', () => {
    const t = [0, 900, 1800, 2700, 2760, 2820, 2880];
    expect(gridRangesFrom(t, 0)).toEqual([
      { fromMs: 0, toMs: 2700, stepMs: 900 },
      { fromMs: 2700, toMs: 2940, stepMs: 60 },
    ]);
    expect(gridRangesFrom(t, 2760)).toEqual([{ fromMs: 2760, toMs: 2940, stepMs: 60 }]);
  });

  it('treats a two-point stretch as a gap between grids, not as a grid of its own', () => {
    const t = [0, 60, 120, 1000, 1060, 1120];
    expect(gridRangesFrom(t, 0)).toEqual([
      { fromMs: 0, toMs: 180, stepMs: 60 },
      { fromMs: 1000, toMs: 1180, stepMs: 60 },
    ]);
  });
});
