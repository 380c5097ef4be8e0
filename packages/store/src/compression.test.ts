import { describe, expect, it } from 'vitest';
import { compressSeries, type Point, SwingingDoorCompressor } from './compression.js';

/** Deterministic pseudo-random walk with steps, ramps and a spike (invented test data). */
function series(n: number, seed: number): Point[] {
  let s = seed >>> 0;
  const rnd = (): number => {
    // LCG constants from Numerical Recipes (Press et al.), common practice.
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return s / 2 ** 32;
  };
  const out: Point[] = [];
  let v = 50;
  for (let i = 0; i < n; i++) {
    v += (rnd() - 0.5) * 0.4 + (i % 500 < 100 ? 0.05 : 0);
    if (i === Math.floor(n / 3)) v += 10;
    out.push({
      time: 1_700_000_000_000 + i * 1000 + Math.floor(rnd() * 300),
      value: i === Math.floor(n / 2) ? v + 25 : v,
    });
  }
  return out;
}

/** Linear interpolation of the kept points at time t. */
function interpolate(kept: readonly Point[], t: number): number {
  let lo = 0;
  let hi = kept.length - 1;
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1;
    if (kept[mid]!.time <= t) lo = mid;
    else hi = mid;
  }
  const a = kept[lo]!;
  const b = kept[hi]!;
  if (b.time === a.time) return a.value;
  return a.value + ((b.value - a.value) * (t - a.time)) / (b.time - a.time);
}

describe('swinging-door compression', () => {
  for (const [deviation, seed] of [
    [0.1, 1],
    [0.5, 2],
    [2, 3],
  ] as const) {
    it(`stays within its error bound ${deviation} of every input point (seed ${seed})`, () => {
      // The bound is the definition of the method (Bristol 1990); common practice, no other source.
      const input = series(20_000, seed);
      const kept = compressSeries(input, 'swinging-door', deviation);
      let worst = 0;
      for (const p of input) worst = Math.max(worst, Math.abs(interpolate(kept, p.time) - p.value));
      expect(worst).toBeLessThanOrEqual(deviation * (1 + 1e-9));
      // It does compress, and keeps first, last and received values only.
      expect(kept.length).toBeLessThan(input.length / 2);
      expect(kept[0]).toEqual(input[0]);
      expect(kept.at(-1)).toEqual(input.at(-1));
      const received = new Set(input.map((p) => `${p.time}:${p.value}`));
      expect(kept.every((p) => received.has(`${p.time}:${p.value}`))).toBe(true);
    });
  }

  it('keeps a single-sample spike', () => {
    const input = series(3000, 7);
    const spike = input[1500]!;
    const kept = compressSeries(input, 'swinging-door', 0.5);
    expect(kept).toContainEqual(spike);
  });

  it('reduces a straight line to its two ends', () => {
    // Exact arithmetic: a line is one segment; common practice, no source.
    const input = Array.from({ length: 1000 }, (_, i) => ({ time: i * 1000, value: 3 + 0.25 * i }));
    expect(compressSeries(input, 'swinging-door', 0.01)).toEqual([input[0], input[999]]);
  });

  it('streams the same as the whole-series function', () => {
    const input = series(5000, 11);
    const c = new SwingingDoorCompressor(0.3);
    const streamed = input.flatMap((p) => c.push(p));
    streamed.push(...c.end());
    expect(streamed).toEqual(compressSeries(input, 'swinging-door', 0.3));
  });

  it('rejects times that do not increase, and a non-positive deviation', () => {
    const c = new SwingingDoorCompressor(1);
    c.push({ time: 10, value: 1 });
    expect(() => c.push({ time: 10, value: 2 })).toThrow(
      expect.objectContaining({ code: 'STORE_BAD_SAMPLE' }),
    );
    expect(() => new SwingingDoorCompressor(0)).toThrow(
      expect.objectContaining({ code: 'STORE_BAD_REQUEST' }),
    );
  });
});

describe('deadband compression', () => {
  it('holds every dropped point within the deviation of the last kept value', () => {
    // Sample-and-hold bound is the definition of exception deadband; common practice, no source.
    const input = series(20_000, 5);
    const kept = compressSeries(input, 'deadband', 0.5);
    let k = 0;
    let worst = 0;
    for (const p of input) {
      while (k + 1 < kept.length && kept[k + 1]!.time <= p.time) k++;
      worst = Math.max(worst, Math.abs(kept[k]!.value - p.value));
    }
    expect(worst).toBeLessThanOrEqual(0.5);
    expect(kept.length).toBeLessThan(input.length / 2);
    expect(kept.at(-1)).toEqual(input.at(-1));
  });
});
