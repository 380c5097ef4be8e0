import { describe, expect, it } from 'vitest';
import { MonitorBadInputError } from './errors.js';
import { caoRhinehartR, detectSteadyState, slopeSpreadSteady } from './steady-state.js';
import { seededNormal } from './synthetic.js';

function noise(seed: number, n: number, sd: number): number[] {
  const z = seededNormal(seed);
  return Array.from({ length: n }, () => sd * z());
}

describe('Cao and Rhinehart (1995) R-statistic', () => {
  it('R is near 1 on independent noise about a constant mean', () => {
    // Cao and Rhinehart (1995), Ind. Eng. Chem. Res. 34, 4219: both variance estimates agree under
    // steady state, so R scatters about 1.
    const x = noise(11, 20_000, 1).map((v) => 100 + v);
    const r = Array.from(caoRhinehartR(x)).filter(Number.isFinite);
    r.sort((a, b) => a - b);
    const med = r[r.length >> 1]!;
    expect(med).toBeGreaterThan(0.8);
    expect(med).toBeLessThan(1.2);
  });

  it('marks a flat noisy signal steady, and a ramp (start-up) and a step (trip) transient', () => {
    const n = 600;
    const e = noise(12, n, 1);
    // Flat: 200 points of noise. Ramp: +1 per point (one noise sigma per minute) from 200 to 300.
    // Step (trip): -50 at 450. Invented signal; expectations: common practice, no source.
    const x = e.map((v, i) => {
      let base = 100;
      if (i >= 200 && i < 300) base += i - 200;
      if (i >= 300) base += 100;
      if (i >= 450) base -= 50;
      return base + v;
    });
    const res = detectSteadyState([{ role: 'load', value: x }]);
    const s = res.steady;
    const frac = (a: number, b: number) => Array.from(s.slice(a, b)).reduce((p, v) => p + v, 0) / (b - a);
    expect(frac(25, 200)).toBeGreaterThan(0.9); // flat and noisy: steady
    expect(frac(215, 300)).toBe(0); // ramp: transient throughout (after a short lag)
    expect(frac(450, 460)).toBe(0); // just after the trip: transient
    expect(frac(420, 450)).toBeGreaterThan(0.8); // settled plateau before the trip
    expect(frac(0, 20)).toBe(0); // warm-up (20 points by default) is not called steady
    expect(res.tags.get('load')!.r[230]).toBeGreaterThan(2);
  });

  it('a gap restarts the filters; the machine is steady only where every key tag and validity agree', () => {
    const a = noise(13, 100, 1).map((v) => 10 + v);
    const b = noise(14, 100, 1).map((v, i) => 20 + v + (i >= 70 ? 3 * (i - 70) : 0));
    a[50] = Number.NaN;
    const valid = new Uint8Array(100).fill(1);
    valid[40] = 0;
    const res = detectSteadyState(
      [
        { role: 'a', value: a },
        { role: 'b', value: b },
      ],
      { valid },
    );
    expect(
      res.tags
        .get('a')!
        .steady.slice(50, 71)
        .every((v) => v === 0),
    ).toBe(true); // re-warm-up
    expect(res.steady[40]).toBe(0);
    expect(Array.from(res.steady.slice(80))).toEqual(Array(20).fill(0)); // b ramps
    expect(res.steadyCount).toBe(Array.from(res.steady).reduce((p, v) => p + v, 0));
  });

  it('rejects filter factors outside (0, 1]', () => {
    expect(() => caoRhinehartR([1, 2, 3], { lambda1: 0 })).toThrow(MonitorBadInputError);
    expect(() => caoRhinehartR([1, 2, 3], { lambda2: 1.5 })).toThrow(MonitorBadInputError);
  });
});

describe('windowed slope-and-spread test', () => {
  it('passes a flat window, fails a ramp and a noisy window (hand-computed slope)', () => {
    const t = Array.from({ length: 10 }, (_, i) => i * 60_000);
    const flat = [5, 5.1, 4.9, 5, 5.1, 4.9, 5, 5.1, 4.9, 5];
    const ramp = t.map((_, i) => 5 + 0.2 * i); // change over the window 0.2 x 9 = 1.8
    const opts = { window: 10, maxChange: 1, maxSpread: 0.2 };
    expect(slopeSpreadSteady(flat, t, opts)[9]).toBe(1);
    expect(slopeSpreadSteady(ramp, t, opts)[9]).toBe(0);
    expect(slopeSpreadSteady(ramp, t, { ...opts, maxChange: 1.81 })[9]).toBe(1); // exact line: spread 0
    expect(slopeSpreadSteady(flat, t, { ...opts, maxSpread: 0.05 })[9]).toBe(0);
    expect(slopeSpreadSteady(flat, t, opts)[8]).toBe(0); // window not full yet
  });

  it('combines with the R-statistic in detectSteadyState', () => {
    const x = noise(15, 200, 0.1).map((v) => 50 + v);
    const t = x.map((_, i) => i * 60_000);
    const both = detectSteadyState(
      [{ role: 'x', value: x, slopeSpread: { window: 20, maxChange: 0.5, maxSpread: 0.01 } }],
      {
        t,
      },
    );
    expect(both.steadyCount).toBe(0); // spread 0.1 > 0.01 everywhere
    expect(() =>
      detectSteadyState([{ role: 'x', value: x, slopeSpread: { window: 20, maxChange: 1, maxSpread: 1 } }]),
    ).toThrow(MonitorBadInputError);
  });
});
