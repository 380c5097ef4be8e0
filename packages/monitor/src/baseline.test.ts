import { describe, expect, it } from 'vitest';
import { computeDrift, evaluateBaseline, fitBaseline } from './baseline.js';
import { SingularFitError, TooFewPointsError } from './errors.js';
import { seededNormal } from './synthetic.js';

const curve = (x: number) => 0.6 + 0.5 * x - 0.3 * x * x; // invented quadratic efficiency curve

describe('fitBaseline: polynomial', () => {
  it('recovers a known quadratic exactly from noiseless data', () => {
    // Exact data: least squares must return the generating coefficients (common practice, no source).
    const x = Array.from({ length: 25 }, (_, i) => 0.4 + (0.6 * i) / 24);
    const b = fitBaseline(x, x.map(curve), { method: 'polynomial', degree: 2 });
    if (b.kind !== 'polynomial') throw new Error('expected a polynomial baseline');
    expect(b.coefficients[0]).toBeCloseTo(0.6, 10);
    expect(b.coefficients[1]).toBeCloseTo(0.5, 10);
    expect(b.coefficients[2]).toBeCloseTo(-0.3, 10);
    expect(b.r2).toBeCloseTo(1, 12);
    expect(b.residualStd).toBeLessThan(1e-12);
    expect([b.xMin, b.xMax, b.n]).toEqual([0.4, 1, 25]);
  });

  it('recovers it from noisy data within the fit uncertainty', () => {
    const z = seededNormal(21);
    const x = Array.from({ length: 400 }, (_, i) => 0.4 + (0.6 * (i % 100)) / 99);
    const y = x.map((v) => curve(v) + 0.003 * z());
    const b = fitBaseline(x, y, { method: 'polynomial', degree: 2 });
    expect(b.residualStd).toBeGreaterThan(0.0025);
    expect(b.residualStd).toBeLessThan(0.0035);
    for (const xe of [0.45, 0.7, 0.95]) {
      const v = evaluateBaseline(b, xe);
      // Within 3 standard uncertainties of the fitted mean (about 99.7 % for normal errors).
      expect(Math.abs(v.efficiency - curve(xe))).toBeLessThan(3 * v.u);
      expect(v.u).toBeGreaterThan(0);
      expect(v.u).toBeLessThan(0.001);
      expect(v.outOfRange).toBe(false);
    }
  });

  it('matches a reference library for degrees 1, 2 and 3', () => {
    // Reference: numpy.polyfit(x, y, d, full=True) (NumPy 2.4.6), coefficients reversed
    // to ascending powers; residual std = sqrt(SSE / (n - d - 1)). Data invented.
    const x = [0.42, 0.47, 0.51, 0.55, 0.58, 0.63, 0.66, 0.71, 0.74, 0.78, 0.83, 0.86, 0.9, 0.94, 0.97, 1.0];
    const y = [
      0.781, 0.795, 0.806, 0.812, 0.821, 0.826, 0.83, 0.836, 0.835, 0.839, 0.838, 0.837, 0.836, 0.832, 0.829,
      0.824,
    ];
    const want: [1 | 2 | 3, number[], number][] = [
      [1, [0.7738790335322502, 0.0688255812540257], 0.011513920455191243],
      [2, [0.590286113599067, 0.6151286451404318, -0.38097060167388674], 0.0010567803779576567],
      [
        3,
        [0.581518001542927, 0.6551707640640893, -0.4393856179160361, 0.027343459861457205],
        0.0010912954046610654,
      ],
    ];
    for (const [degree, coefficients, residualStd] of want) {
      const b = fitBaseline(x, y, { method: 'polynomial', degree });
      if (b.kind !== 'polynomial') throw new Error('expected a polynomial baseline');
      for (const [k, c] of b.coefficients.entries()) expect(c).toBeCloseTo(coefficients[k]!, 9);
      expect(b.residualStd).toBeCloseTo(residualStd, 12);
    }
  });

  it('flags extrapolation outside the fitted range instead of hiding it', () => {
    const x = [0.5, 0.6, 0.7, 0.8, 0.9, 0.5, 0.7, 0.9];
    const b = fitBaseline(x, x.map(curve), { method: 'polynomial', degree: 1 });
    expect(evaluateBaseline(b, 0.95).outOfRange).toBe(true);
    expect(evaluateBaseline(b, 0.45).outOfRange).toBe(true);
    expect(evaluateBaseline(b, 0.9).outOfRange).toBe(false);
    expect(Number.isFinite(evaluateBaseline(b, 1.2).efficiency)).toBe(true);
  });

  it('refuses too few points and too few distinct operating points', () => {
    expect(() => fitBaseline([0.5, 0.6, 0.7], [0.8, 0.8, 0.8], { method: 'polynomial', degree: 2 })).toThrow(
      TooFewPointsError,
    );
    expect(() =>
      fitBaseline([0.5, 0.5, 0.5, 0.5, 0.7, 0.7], [0.8, 0.81, 0.8, 0.79, 0.8, 0.8], {
        method: 'polynomial',
        degree: 2,
        minPoints: 4,
      }),
    ).toThrow(SingularFitError);
  });
});

describe('fitBaseline: binned medians', () => {
  it('follows the curve and shrugs off an outlier', () => {
    const z = seededNormal(22);
    const x: number[] = [];
    const y: number[] = [];
    for (let i = 0; i < 600; i++) {
      const xi = 0.4 + (0.6 * i) / 599;
      x.push(xi);
      y.push(curve(xi) + 0.002 * z());
    }
    y[300] = 0.1; // a wild point
    const b = fitBaseline(x, y, { method: 'binned', bins: 12 });
    if (b.kind !== 'binned') throw new Error('expected a binned baseline');
    expect(b.bins.length).toBe(12);
    // Curvature within a bin of width 0.05 adds at most 0.3 x 0.025^2 ~ 2e-4 to the bias (hand estimate).
    for (const xe of [0.5, 0.7, 0.9])
      expect(Math.abs(evaluateBaseline(b, xe).efficiency - curve(xe))).toBeLessThan(1.5e-3);
    expect(evaluateBaseline(b, 1.05).outOfRange).toBe(true);
  });
});

describe('computeDrift', () => {
  it('drift in points with u_drift^2 = u_eff^2 + u_baseline^2', () => {
    const x = Array.from({ length: 10 }, (_, i) => 0.5 + 0.05 * i);
    const y = x.map((v, i) => curve(v) + (i % 2 === 0 ? 0.001 : -0.001));
    const b = fitBaseline(x, y, { method: 'polynomial', degree: 1 });
    const base = evaluateBaseline(b, 0.7);
    const d = computeDrift(base.efficiency - 0.02, 0.004, b, 0.7);
    expect(d.driftPts).toBeCloseTo(-2, 10); // 0.02 below the baseline = -2 points, hand-computed
    expect(d.uDriftPts).toBeCloseTo(100 * Math.hypot(0.004, base.u), 12);
    expect(d.outOfRange).toBe(false);
  });
});
