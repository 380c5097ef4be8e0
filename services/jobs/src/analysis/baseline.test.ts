import { evaluateBaseline } from '@isentrope/monitor';
import type { BaselineRow } from '@isentrope/store';
import { describe, expect, it } from 'vitest';
import { modelFromCoefficients } from './baseline.js';

/** A baseline row written without the fitted model (coefficients only), as a tool or an older version writes it. */
function row(id: number, coefficients: number[]): BaselineRow {
  return {
    id,
    machine_id: 3,
    operating_point: 'load',
    reference_from: new Date('2026-01-01T00:00:00Z'),
    reference_to: new Date('2026-02-01T00:00:00Z'),
    coefficients,
    x_min: 0,
    x_max: 2,
    n: 40,
    residual_std: null,
    r_squared: null,
    statistics: {},
    active: true,
    created_at: new Date('2026-02-02T00:00:00Z'),
    created_by: 'system',
  };
}

describe('a baseline row stored without its fitted model', () => {
  it('is evaluated with every coefficient, x^4 included', () => {
    // eta(x) = 0.5 + 0.1 x - 0.02 x^2 + 0.003 x^3 - 0.0004 x^4 at x = 2:
    // 0.5 + 0.2 - 0.08 + 0.024 - 0.0064 = 0.6376 (worked by hand, common practice, no source).
    const model = modelFromCoefficients(row(7, [0.5, 0.1, -0.02, 0.003, -0.0004]));
    expect(model.degree).toBe(4);
    const v = evaluateBaseline(model, 2);
    expect(v.efficiency).toBeCloseTo(0.6376, 14);
    expect(v.u).toBe(0); // no covariance stored: uncertainty unknown, taken as 0
  });

  it('keeps a constant row a constant', () => {
    const v = evaluateBaseline(modelFromCoefficients(row(8, [0.81])), 1.3);
    expect(v.efficiency).toBe(0.81); // exact: 0.81 + 0 * x (common practice, no source)
  });

  it('refuses a row whose coefficients cannot be evaluated, naming the baseline and the degree', () => {
    expect(() => modelFromCoefficients(row(9, [0.5, Number.NaN, 0.1]))).toThrow(
      expect.objectContaining({ code: 'JOBS_BAD_BASELINE', details: { baselineId: 9, degree: 2, index: 1 } }),
    );
    expect(() => modelFromCoefficients(row(10, []))).toThrow(
      expect.objectContaining({ code: 'JOBS_BAD_BASELINE', details: { baselineId: 10, degree: -1 } }),
    );
  });
});
