import { describe, expect, it } from 'vitest';
import { LengthMismatchError } from './errors.js';
import { bucketStats, DEFAULT_WINDOWS_MS, rollingWindows } from './rolling.js';
import { seededNormal } from './synthetic.js';

const MIN = 60_000;

describe('rollingWindows', () => {
  const input = {
    t: [0, MIN, 2 * MIN, 3 * MIN],
    efficiency: [0.8, 0.82, 0.84, 0.86],
    uSys: [0.01, 0.01, 0.01, 0.01],
    specificWork: [100e3, 110e3, 120e3, 130e3],
    power: [1e6, 1.1e6, 1.2e6, 1.3e6],
    use: [1, 1, 1, 0],
  };

  it('mean, scatter and u_mean^2 = u_sys^2 + s^2/n over used points (hand-computed)', () => {
    // n = 3, mean 0.82, s = 0.02, u = sqrt(0.01^2 + 0.02^2/3) = 0.0152753; coverage 3/4. Hand-computed.
    const [w] = rollingWindows(input, 4 * MIN, MIN, [4 * MIN]);
    expect(w!.n).toBe(3);
    expect(w!.efficiency).toBeCloseTo(0.82, 12);
    expect(w!.sEfficiency).toBeCloseTo(0.02, 12);
    expect(w!.uEfficiency).toBeCloseTo(Math.sqrt(1e-4 + 4e-4 / 3), 12);
    expect(w!.coverage).toBeCloseTo(0.75, 12);
    expect(w!.specificWork).toBeCloseTo(110e3, 6);
    expect(w!.power).toBeCloseTo(1.1e6, 3);
    expect(Number.isNaN(w!.operatingPoint)).toBe(true);
  });

  it('the window is [end - length, end): a point at the end is left out', () => {
    const [w] = rollingWindows(input, 2 * MIN, MIN, [2 * MIN]);
    expect(w!.n).toBe(2);
    expect(w!.efficiency).toBeCloseTo(0.81, 12);
  });

  it('with one point the random part comes from uRandom; without it the uncertainty is unknown (NaN)', () => {
    const one = { ...input, use: [1, 0, 0, 0] };
    const [a] = rollingWindows({ ...one, uRandom: [0.02, 0.02, 0.02, 0.02] }, 4 * MIN, MIN, [4 * MIN]);
    expect(a!.uEfficiency).toBeCloseTo(Math.sqrt(1e-4 + 4e-4), 12);
    const [b] = rollingWindows(one, 4 * MIN, MIN, [4 * MIN]);
    expect(Number.isNaN(b!.uEfficiency)).toBe(true);
    const [c] = rollingWindows({ ...input, use: [0, 0, 0, 0] }, 4 * MIN, MIN, [4 * MIN]);
    expect(c!.n).toBe(0);
    expect(Number.isNaN(c!.efficiency)).toBe(true);
  });

  it('defaults to 1 h, 24 h and 7 d', () => {
    expect(DEFAULT_WINDOWS_MS).toEqual([3_600_000, 86_400_000, 604_800_000]);
    expect(rollingWindows(input, 4 * MIN, MIN).map((w) => w.lengthMs)).toEqual([...DEFAULT_WINDOWS_MS]);
    expect(() => rollingWindows({ ...input, use: [1] }, 0, MIN)).toThrow(LengthMismatchError);
  });

  it('bucketStats gives consecutive buckets, empty ones with n = 0', () => {
    const b = bucketStats(
      { t: [0, MIN, 5 * MIN], efficiency: [0.8, 0.9, 0.7], uSys: [0, 0, 0], use: [1, 1, 1] },
      2 * MIN,
      0,
      MIN,
    );
    expect(b.map((x) => x.n)).toEqual([2, 0, 1]);
    expect(b[0]!.efficiency).toBeCloseTo(0.85, 12);
    expect(b.map((x) => x.endMs)).toEqual([2 * MIN, 4 * MIN, 6 * MIN]);
  });

  it('the stated uncertainty covers the truth about 95 % of the time at k = 2 (Monte Carlo)', () => {
    // JCGM 101:2008-style check: 2000 trials, each with its own systematic error drawn from
    // N(0, u_sys) and random noise per point; the window mean must fall within 2 u of the truth in
    // close to 95.4 % of trials (binomial sd about 0.5 %). Invented numbers.
    const z = seededNormal(61);
    const trials = 2000;
    const n = 60;
    const uSysValue = 0.003;
    let covered = 0;
    for (let k = 0; k < trials; k++) {
      const bias = uSysValue * z();
      const t = Array.from({ length: n }, (_, i) => i * MIN);
      const efficiency = t.map(() => 0.85 + bias + 0.01 * z());
      const [w] = rollingWindows(
        { t, efficiency, uSys: Array(n).fill(uSysValue), use: Array(n).fill(1) },
        n * MIN,
        MIN,
        [n * MIN],
      );
      if (Math.abs(w!.efficiency - 0.85) < 2 * w!.uEfficiency) covered++;
    }
    expect(covered / trials).toBeGreaterThan(0.935);
    expect(covered / trials).toBeLessThan(0.975);
  });
});
