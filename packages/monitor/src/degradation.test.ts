import { describe, expect, it } from 'vitest';
import { degradation, theilSen } from './degradation.js';
import { TooFewPointsError } from './errors.js';
import { MS_PER_DAY, MS_PER_MONTH, normalCdf, normalQuantile } from './stats.js';
import { seededNormal } from './synthetic.js';

describe('theilSen', () => {
  it('median of pairwise slopes, Sen intercept and Kendall S (hand-computed)', () => {
    // x = 1..5, y = 1,3,2,5,4 (scipy.stats.theilslopes agrees: 0.875, 0.125, [-1, 3]). Pairwise slopes sorted: -1,-1,1/3,1/2,3/4,1,1,4/3,2,3 -> median
    // (3/4 + 1)/2 = 0.875; intercept median(y - 0.875 x) = 0.125; S = 8 - 2 = 6;
    // Var(S) = 5*4*15/18 = 16.667. Hand-computed.
    const r = theilSen([1, 2, 3, 4, 5], [1, 3, 2, 5, 4]);
    expect(r.slope).toBeCloseTo(0.875, 14);
    expect(r.intercept).toBeCloseTo(0.125, 14);
    expect(r.kendallS).toBe(6);
    expect(r.varS).toBeCloseTo(250 / 15, 12);
    // Sen's interval at 95 %: C = 1.96 sqrt(16.667) = 8.00; M1 = (10 - 8)/2 = 1 -> slope 1 of 10 = -1;
    // M2 + 1 = 9 + 1 = 10 -> slope 10 = 3 (Gilbert 1987, section 16.5 procedure, hand-computed).
    expect(r.slopeLow).toBe(-1);
    expect(r.slopeHigh).toBe(3);
  });

  it('ties in y reduce Var(S) (Gilbert 1987, eq. 16.4; hand-computed)', () => {
    // y = 1,1,2,2,3: two tie groups of 2 -> sum t(t-1)(2t+5) = 2 * 18 = 36; Var = (300 - 36)/18.
    const r = theilSen([1, 2, 3, 4, 5], [1, 1, 2, 2, 3]);
    expect(r.varS).toBeCloseTo(264 / 18, 12);
    expect(r.kendallS).toBe(8);
  });

  it('matches a reference library on 30 points with many ties in y', () => {
    // Reference: scipy.stats.theilslopes(y, x, 0.95 / 0.90, method='joint'), SciPy 1.17.1: slope
    // -0.03571428571428571, intercept -0.25357142857142856, 95 % [-0.05, -0.016666666666666663],
    // 90 % [-0.05, -0.02]. Data invented (rounded noise about a -0.05 slope).
    const y = [
      0.8, -1.1, 0, -0.4, -0.4, -0.4, -1.2, -0.5, -0.8, 0.8, -0.5, -0.7, -0.8, -1, -1.2, -1, -0.7, -1, -0.6,
      -1.1, -1, -0.5, -0.9, -1.4, -1.3, -1.1, -0.6, -1.5, -1.5, -1.1,
    ];
    const x = y.map((_, i) => i + 1);
    const r = theilSen(x, y, 0.95);
    expect(r.slope).toBeCloseTo(-0.03571428571428571, 12);
    expect(r.intercept).toBeCloseTo(-0.25357142857142856, 12);
    expect(r.slopeLow).toBeCloseTo(-0.05, 12);
    expect(r.slopeHigh).toBeCloseTo(-0.016666666666666663, 12);
    const r90 = theilSen(x, y, 0.9);
    expect(r90.slopeLow).toBeCloseTo(-0.05, 12);
    expect(r90.slopeHigh).toBeCloseTo(-0.02, 12);
  });

  it('is robust to an outlier where least squares is not', () => {
    const x = Array.from({ length: 20 }, (_, i) => i);
    const y = x.map((v) => 2 - 0.5 * v);
    y[19] = 100;
    expect(theilSen(x, y).slope).toBeCloseTo(-0.5, 12);
  });

  it('needs two points with distinct x', () => {
    expect(() => theilSen([1], [2])).toThrow(TooFewPointsError);
    expect(() => theilSen([1, 1], [2, 3])).toThrow(TooFewPointsError);
  });

  it('normal quantile: z(0.975) = 1.959964 (Abramowitz and Stegun, Table 26.5)', () => {
    expect(normalQuantile(0.975)).toBeCloseTo(1.959964, 5);
    expect(normalCdf(0)).toBeCloseTo(0.5, 7);
    expect(normalCdf(-1)).toBeCloseTo(0.158655, 6); // A&S Table 26.1
  });
});

describe('degradation', () => {
  const t0 = Date.UTC(2026, 0, 1, 12);

  it('recovers a linear loss rate within 10 % from noisy daily drift means', () => {
    // Invented truth: -0.5 points per month, daily noise 0.1 point, 180 days. Brief: within 10 %.
    const z = seededNormal(31);
    const t = Array.from({ length: 180 }, (_, i) => t0 + i * MS_PER_DAY);
    const y = t.map((ti) => -0.5 * ((ti - t0) / MS_PER_MONTH) + 0.1 * z());
    const d = degradation(t, y, { alarmPts: -5 });
    expect(Math.abs(d.ratePtsPerMonth + 0.5)).toBeLessThan(0.05);
    expect(d.rateLowPtsPerMonth).toBeLessThan(-0.5 + 0.05);
    expect(d.rateHighPtsPerMonth).toBeGreaterThan(-0.5 - 0.05);
    expect(d.rateLowPtsPerMonth).toBeLessThan(d.ratePtsPerMonth);
    expect(d.rateHighPtsPerMonth).toBeGreaterThan(d.ratePtsPerMonth);
    if (d.forecast.status !== 'forecast') throw new Error(`expected a forecast, got ${d.forecast.status}`);
    // True crossing of -5 points: 10 months after t0.
    const truth = t0 + 10 * MS_PER_MONTH;
    expect(Math.abs(d.forecast.atMs - truth)).toBeLessThan(MS_PER_MONTH);
    expect(d.forecast.earliestMs).toBeLessThan(d.forecast.atMs);
    expect(d.forecast.latestMs).toBeGreaterThan(d.forecast.atMs);
  });

  it('gives no forecast for a rising or a flat noisy drift, and says why', () => {
    const z = seededNormal(32);
    const t = Array.from({ length: 60 }, (_, i) => t0 + i * MS_PER_DAY);
    const up = degradation(
      t,
      t.map((_, i) => 0.01 * i),
      { alarmPts: -3 },
    );
    expect(up.forecast.status).toBe('none');
    if (up.forecast.status === 'none') expect(up.forecast.reason).toBe('slope-not-negative');
    // Flat drift with noise and a slope too small to be told from zero.
    const flat = degradation(
      t,
      t.map((_, i) => -0.0005 * i + 0.3 * z()),
      { alarmPts: -3 },
    );
    expect(flat.forecast.status).toBe('none');
    if (flat.forecast.status === 'none') expect(flat.forecast.reason).toBe('interval-spans-zero');
  });

  it('says when the alarm level is already reached, and when there are too few days', () => {
    const t = Array.from({ length: 10 }, (_, i) => t0 + i * MS_PER_DAY);
    const r = degradation(
      t,
      t.map((_, i) => -2.5 - 0.1 * i),
      { alarmPts: -3 },
    );
    expect(r.forecast.status).toBe('reached');
    const few = degradation(t.slice(0, 3), [0, -1, -2], { alarmPts: -3 });
    expect(few.forecast.status).toBe('none');
    if (few.forecast.status === 'none') expect(few.forecast.reason).toBe('too-few-points');
    expect(Number.isNaN(few.ratePtsPerMonth)).toBe(true);
  });
});
