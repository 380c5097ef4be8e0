import { detectSteadyState } from '@isentrope/monitor';
import { describe, expect, it } from 'vitest';
import { coarseSteadyInput } from './pipeline.js';

// Invented series; the thresholds under test are "common practice, no source" (pipeline.ts).
const QUARTER = 900_000;

function grid(n: number, f: (i: number) => number): { t: Float64Array; v: Float64Array } {
  const t = new Float64Array(n);
  const v = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    t[i] = i * QUARTER;
    v[i] = f(i);
  }
  return { t, v };
}

describe('steady state on a coarse (15-minute) grid', () => {
  it('keeps the 1-minute grid on the Cao-Rhinehart statistic alone', () => {
    const input = coarseSteadyInput('massFlow', new Float64Array(10), 60_000);
    expect(input.slopeSpread).toBeUndefined();
    expect(input.cao).toBeUndefined();
  });

  it('finds a slowly swinging process steady where the R-statistic would not', () => {
    // 10 kg/s swinging 1 % over a 6-hour period: every 15 minutes the value has moved.
    const { t, v } = grid(96, (i) => 10 * (1 + 0.01 * Math.sin((2 * Math.PI * i) / 24)));
    const coarse = detectSteadyState([coarseSteadyInput('massFlow', v, QUARTER)], { t });
    const cao = detectSteadyState([{ role: 'massFlow', value: v }], { t });
    // The first window (5 points) cannot be judged yet.
    expect(coarse.steadyCount).toBeGreaterThan(85);
    expect(cao.steadyCount).toBeLessThan(coarse.steadyCount);
  });

  it('marks a start-up ramp as transient', () => {
    // Flat at 10, a ramp from 4 to 10 over two hours, then flat again.
    const { t, v } = grid(48, (i) => (i < 16 ? 10 : i < 24 ? 4 + (6 * (i - 16)) / 8 : 10));
    v.fill(4, 14, 16);
    const result = detectSteadyState([coarseSteadyInput('massFlow', v, QUARTER)], { t });
    for (let i = 16; i < 24; i++) expect(result.steady[i]).toBe(0);
    expect(result.steady[40]).toBe(1);
  });
});
