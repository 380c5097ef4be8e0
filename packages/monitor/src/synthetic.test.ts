/**
 * End-to-end check of the method on an invented machine whose truth is known: steady-state
 * detection -> rolling efficiency -> baseline -> daily drift -> Theil-Sen degradation rate.
 */
import { describe, expect, it } from 'vitest';
import { computeDrift, evaluateBaseline, fitBaseline } from './baseline.js';
import { degradation } from './degradation.js';
import { bucketStats, rollingWindows } from './rolling.js';
import { MS_PER_DAY, MS_PER_MONTH } from './stats.js';
import { detectSteadyState } from './steady-state.js';
import { syntheticMachine } from './synthetic.js';

const t0 = Date.UTC(2026, 0, 1);
const STEP = 60_000;
const curve: [number, number, number] = [0.7, 0.3, -0.18]; // invented efficiency curve vs load
const lossPerMonth = -0.005; // -0.5 points per month, invented truth
const m = syntheticMachine({
  seed: 7,
  startMs: t0,
  days: 120,
  curve,
  lossPerMs: lossPerMonth / MS_PER_MONTH,
  noise: 0.01,
  bias: 0.002,
  loadNoise: 0.002,
});
const n = m.t.length;
const steady = detectSteadyState([{ role: 'load', value: m.load }]).steady;
const uSys = new Float64Array(n).fill(0.003); // stated systematic uncertainty; the true bias 0.002 lies within it
const input = { t: m.t, efficiency: m.efficiency, uSys, operatingPoint: m.load, use: steady };

describe('synthetic machine (invented truth)', () => {
  it('steady-state detection leaves the load ramps out', () => {
    // Ramps of at least 0.1 in load over 30 min (about 1.7 load-noise sigmas per sample) must be
    // caught; smaller ones are close to steady and carry little dynamic error.
    let rampSteady = 0;
    let ramps = 0;
    let flatSteady = 0;
    let flats = 0;
    for (let i = 0; i < n; i++) {
      if (m.ramping[i]! >= 0.1) {
        ramps++;
        rampSteady += steady[i]!;
      } else if (m.ramping[i] === 0) {
        flats++;
        flatSteady += steady[i]!;
      }
    }
    expect(rampSteady / ramps).toBeLessThan(0.05);
    expect(flatSteady / flats).toBeGreaterThan(0.8);
  });

  it('rolling efficiency lies within k = 2 standard uncertainties of the truth (1 h, 24 h, 7 d)', () => {
    // GUM coverage factor k = 2 (JCGM 100:2008, 6.2); truth = mean true efficiency over the same points.
    // Prefix sums of the true efficiency over the used points, for the truth of any window.
    const cumTrue = new Float64Array(n + 1);
    const cumN = new Float64Array(n + 1);
    for (let i = 0; i < n; i++) {
      cumTrue[i + 1] = cumTrue[i]! + (steady[i] === 1 ? m.efficiencyTrue[i]! : 0);
      cumN[i + 1] = cumN[i]! + steady[i]!;
    }
    const idx = (t: number) => Math.max(0, Math.min(n, Math.ceil((t - t0) / STEP)));
    let checked = 0;
    for (let end = t0 + 8 * MS_PER_DAY; end <= t0 + 120 * MS_PER_DAY; end += 6 * 3_600_000) {
      for (const w of rollingWindows(input, end, STEP)) {
        if (w.n < 10) continue;
        const a = idx(end - w.lengthMs);
        const b = idx(end);
        expect(cumN[b]! - cumN[a]!).toBe(w.n);
        const truth = (cumTrue[b]! - cumTrue[a]!) / w.n;
        expect(Math.abs(w.efficiency - truth)).toBeLessThan(2 * w.uEfficiency);
        checked++;
      }
    }
    expect(checked).toBeGreaterThan(1000);
  });

  it('the transients would have biased the mean: leaving them out matters', () => {
    // The hour that ends with the first large ramp (|Delta L| >= 0.3): its dynamic error is 0.018 or more.
    let i = 0;
    while (m.ramping[i]! < 0.3) i++;
    while (m.ramping[i]! > 0) i++;
    const end = m.t[i]!;
    const all = rollingWindows({ ...input, use: new Uint8Array(n).fill(1) }, end, STEP, [3_600_000])[0]!;
    let truth = 0;
    for (let j = i - 60; j < i; j++) truth += m.efficiencyTrue[j]!;
    truth /= 60;
    expect(all.n).toBe(60);
    expect(Math.abs(all.efficiency - truth)).toBeGreaterThan(2 * all.uEfficiency);
  });

  it('the baseline fit recovers the quadratic curve on a 14-day reference period', () => {
    const ref = bucketStats(input, 14 * MS_PER_DAY, t0, STEP); // only to find the period's end
    const endRef = ref[0]!.endMs;
    const x: number[] = [];
    const y: number[] = [];
    for (let i = 0; i < n && m.t[i]! < endRef; i++)
      if (steady[i] === 1) {
        x.push(m.load[i]!);
        y.push(m.efficiency[i]!);
      }
    const b = fitBaseline(x, y, { method: 'polynomial', degree: 2 });
    // Expected: curve + bias + mean loss over the reference period (7 days at -0.5 points/month).
    const offset = 0.002 + (lossPerMonth * 7 * MS_PER_DAY) / MS_PER_MONTH;
    for (const L of [0.55, 0.75, 0.95]) {
      const v = evaluateBaseline(b, L);
      const truth = curve[0] + curve[1] * L + curve[2] * L * L + offset;
      expect(Math.abs(v.efficiency - truth)).toBeLessThan(3 * v.u + 2e-4);
    }
  });

  it('Theil-Sen on daily drift recovers the degradation rate within 10 %', () => {
    const x: number[] = [];
    const y: number[] = [];
    for (let i = 0; i < n && m.t[i]! < t0 + 14 * MS_PER_DAY; i++)
      if (steady[i] === 1) {
        x.push(m.load[i]!);
        y.push(m.efficiency[i]!);
      }
    const b = fitBaseline(x, y, { method: 'polynomial', degree: 2 });
    const days = bucketStats(input, MS_PER_DAY, t0, STEP).filter((d) => d.n >= 60);
    const t = days.map((d) => d.endMs - MS_PER_DAY / 2);
    const drift = days.map((d) => computeDrift(d.efficiency, d.uEfficiency, b, d.operatingPoint).driftPts);
    const deg = degradation(t, drift, { alarmPts: -5 });
    // Truth -0.5 points/month; brief: within 10 %.
    expect(Math.abs(deg.ratePtsPerMonth / -0.5 - 1)).toBeLessThan(0.1);
    expect(deg.rateLowPtsPerMonth).toBeLessThan(-0.5 * 0.9);
    expect(deg.forecast.status).toBe('forecast');
  });
});
