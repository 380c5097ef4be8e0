import { describe, expect, it } from 'vitest';
import { evaluateMachine } from '../machines/index.js';
import { perfectGas } from '../perfect-gas.js';
import { hsChartGeometry } from './index.js';

const R = 287;
const k = 1.4;
const cp = (k * R) / (k - 1);
const air = perfectGas(R, cp, 'air (k = 1.4)');

describe('h-s chart geometry on a constant-cp ideal gas', () => {
  const T1 = 300;
  const T2s = T1 * 8 ** ((k - 1) / k);
  const result = evaluateMachine({
    kind: 'compressor',
    fluid: air,
    inlet: { p: 1e5, T: T1 },
    outlet: { p: 8e5, T: T1 + (T2s - T1) / 0.8 },
  });
  const chart = hsChartGeometry(result, air);

  it('the slope of each isobar between neighbouring points is T (dh = T ds at constant p)', () => {
    for (const isobar of [chart.inletIsobar, chart.outletIsobar]) {
      expect(isobar.points.length).toBe(41);
      for (let i = 1; i < isobar.points.length; i++) {
        const a = isobar.points[i - 1]!;
        const b = isobar.points[i]!;
        const slope = (b.h - a.h) / (b.s - a.s);
        // Gibbs relation dh = T ds + v dp (any thermodynamics text); the secant slope lies between the ends' T.
        expect(slope / (0.5 * (a.T + b.T)) - 1).toBeLessThan(1e-4);
        expect(slope).toBeGreaterThan(a.T);
        expect(slope).toBeLessThan(b.T);
      }
    }
  });

  it('isobars cover the process entropy range with a margin', () => {
    const s = chart.inletIsobar.points.map((q) => q.s);
    expect(Math.min(...s)).toBeLessThan(result.inlet.s);
    expect(Math.max(...s)).toBeGreaterThan(result.outlet.s);
  });

  it('the isentropic path is vertical and ends at the ideal outlet', () => {
    for (const q of chart.isentropicPath) expect(q.s).toBeCloseTo(result.inlet.s, 9);
    expect(chart.isentropicPath.at(-1)!.h).toBeCloseTo(result.outletIsentropic.h, 6);
    expect(chart.isentropicPath[0]).toEqual(chart.inlet);
  });

  it('the polytropic path ends at the real outlet, with the small-stage efficiency near the Schultz figure', () => {
    expect(chart.pathKind).toBe('polytropic');
    const end = chart.actualPath.at(-1)!;
    expect(end.h).toBeCloseTo(result.outlet.h, 3);
    expect(end.s).toBeCloseTo(result.outlet.s, 3);
    // 20 finite steps approach the infinitesimal-stage (polytropic) efficiency (common practice, no source).
    expect(Math.abs(chart.pathEfficiency! - result.polytropicEfficiency!)).toBeLessThan(3e-3);
    // Entropy rises monotonically along a compression with losses (second law, step by step).
    for (let i = 1; i < chart.actualPath.length; i++) {
      expect(chart.actualPath[i]!.s).toBeGreaterThan(chart.actualPath[i - 1]!.s);
    }
    expect(chart.entropyGeneration).toBe(result.entropyGeneration);
  });

  it('a straight line when asked, and no dome without a saturation line', () => {
    const straight = hsChartGeometry(result, air, { path: 'straight', pathPoints: 3 });
    expect(straight.pathKind).toBe('straight');
    expect(straight.actualPath[1]!.h).toBeCloseTo(0.5 * (result.inlet.h + result.outlet.h), 6);
    expect(straight.dome).toBeUndefined();
  });

  it('an expansion path ends at the turbine outlet', () => {
    const T2 = 1200 - 0.9 * (1200 - 1200 * 0.1 ** ((k - 1) / k));
    const t = evaluateMachine({
      kind: 'turbine',
      fluid: air,
      inlet: { p: 1e6, T: 1200 },
      outlet: { p: 1e5, T: T2 },
    });
    const c = hsChartGeometry(t, air);
    expect(c.pathKind).toBe('polytropic');
    expect(c.actualPath.at(-1)!.h).toBeCloseTo(t.outlet.h, 3);
    // Expansion: small-stage efficiency below the overall isentropic one (reheat factor > 1).
    expect(c.pathEfficiency!).toBeLessThan(t.isentropicEfficiency!);
  });
});
