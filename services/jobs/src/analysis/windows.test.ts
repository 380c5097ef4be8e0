import { rollingWindows } from '@isentrope/monitor';
import { describe, expect, it } from 'vitest';
import { windowFigure } from './windows.js';

describe('windowFigure', () => {
  it('matches the monitor rolling window on the same points (the monitor is the reference)', () => {
    const step = 60_000;
    const t: number[] = [];
    const e: number[] = [];
    const u: number[] = [];
    const use: number[] = [];
    for (let i = 0; i < 60; i++) {
      t.push(i * step);
      e.push(0.8 + 0.003 * Math.sin(i * 1.7)); // invented
      u.push(0.004 + 0.0001 * (i % 5));
      use.push(i % 7 === 3 ? 0 : 1);
    }
    const [w] = rollingWindows({ t, efficiency: e, uSys: u, use }, 60 * step, step, [3_600_000]);
    const idx = t.map((_, i) => i).filter((i) => use[i] === 1);
    const n = idx.length;
    const mean = idx.reduce((s, i) => s + (e[i] as number), 0) / n;
    const std = Math.sqrt(idx.reduce((s, i) => s + ((e[i] as number) - mean) ** 2, 0) / (n - 1));
    const meanU = idx.reduce((s, i) => s + (u[i] as number), 0) / n;
    const f = windowFigure({ n, mean, std, meanU }, 3_600_000, step);
    expect(f.n).toBe(w?.n);
    expect(f.coverage).toBeCloseTo(w?.coverage ?? Number.NaN, 12);
    expect(f.mean).toBeCloseTo(w?.efficiency ?? Number.NaN, 12);
    expect(f.u).toBeCloseTo(w?.uEfficiency ?? Number.NaN, 12);
  });

  it('has no uncertainty without scatter (n < 2) and no mean without points', () => {
    expect(windowFigure({ n: 1, mean: 0.8, std: null, meanU: 0.01 }, 3_600_000, 60_000).u).toBeNaN();
    const empty = windowFigure({ n: 0, mean: null, std: null, meanU: null }, 3_600_000, 60_000);
    expect(empty.mean).toBeNaN();
    expect(empty.coverage).toBe(0);
  });
});
