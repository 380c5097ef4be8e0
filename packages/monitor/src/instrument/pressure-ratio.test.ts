import { describe, expect, it } from 'vitest';
import { LengthMismatchError, MonitorBadInputError, TooFewPointsError } from '../errors.js';
import { seededNormal } from '../synthetic.js';
import { detectGaugeAbsoluteStep } from './gauge-absolute.js';
import { pressureRatioConsistency } from './pressure-ratio.js';

// Polytropic relation T2/T1 = (p2/p1)^m with m = (k-1)/(k eta_p) (compression) or eta_p (k-1)/k
// (expansion) for an ideal gas: ASME PTC 10 / any turbomachinery text. k = 1.4 for air (from
// memory). Ambient 101 325 Pa: ISO 2533. The mix-up pattern: common practice, no source.
// The series are invented test data.
const ATM = 101_325;
const MIN = 60_000;
const T0 = Date.UTC(2026, 0, 1);
const N = 600;
const AT = T0 + 300 * MIN;

interface Machine {
  /** True inlet and outlet pressure [Pa] at reading i. */
  pIn: (i: number) => number;
  pOut: (i: number) => number;
  /** Polytropic exponent m at reading i. */
  m: (i: number) => number;
  /** Offsets added to the pressure readings (the fault) [Pa]. */
  inOffset?: (i: number) => number;
  outOffset?: (i: number) => number;
}

/** Readings of a gas machine with 0.02 bar and 0.1 K transmitter noise. */
function machine(spec: Machine, seed = 5) {
  const z = seededNormal(seed);
  const t = new Float64Array(N);
  const pIn = new Float64Array(N);
  const pOut = new Float64Array(N);
  const TIn = new Float64Array(N);
  const TOut = new Float64Array(N);
  for (let i = 0; i < N; i++) {
    t[i] = T0 + i * MIN;
    const p1 = spec.pIn(i);
    const p2 = spec.pOut(i);
    const T1 = 290 + 3 * Math.sin(i / 90);
    TIn[i] = T1 + 0.1 * z();
    TOut[i] = T1 * (p2 / p1) ** spec.m(i) + 0.1 * z();
    pIn[i] = p1 + (spec.inOffset?.(i) ?? 0) + 2000 * z();
    pOut[i] = p2 + (spec.outOffset?.(i) ?? 0) + 2000 * z();
  }
  return { t, pIn, pOut, TIn, TOut, ambientPressure: ATM };
}

const compression = 0.4 / (1.4 * 0.8); // eta_p = 0.8
const gasCompressor = (extra: Partial<Machine> = {}): Machine => ({
  pIn: (i) => 18e5 + 0.2e5 * Math.sin(i / 50),
  pOut: () => 30e5,
  m: () => compression,
  ...extra,
});

describe('pressureRatioConsistency', () => {
  it('pins an absolute transmitter on the gauge inlet tag (inlet reads one ambient high)', () => {
    const r = pressureRatioConsistency(machine(gasCompressor({ inOffset: (i) => (i >= 300 ? ATM : 0) })), AT);
    expect(r.verdict).toBe('mix-up');
    expect(r.mixUp).toMatchObject({
      tag: 'inlet',
      direction: 'reads-high',
      likelyCause: 'absolute transmitter on a gauge tag',
    });
    expect(Math.abs(r.exponentBefore - compression)).toBeLessThan(0.005);
    expect(r.exponentAfter).toBeGreaterThan(r.exponentBefore * 1.05);
  });

  it('pins a gauge transmitter on the absolute outlet tag (outlet reads one ambient low)', () => {
    const r = pressureRatioConsistency(
      machine(gasCompressor({ outOffset: (i) => (i >= 300 ? -ATM : 0) })),
      AT,
    );
    expect(r.verdict).toBe('mix-up');
    expect(r.mixUp).toMatchObject({ tag: 'outlet', direction: 'reads-low' });
  });

  it('calls a real inlet pressure step of one atmosphere consistent, though the tag alone flags it', () => {
    const real = machine(gasCompressor({ pIn: (i) => 18e5 + (i >= 300 ? ATM : 0) }));
    // The tag alone cannot tell: the step detector reports it ...
    expect(
      detectGaugeAbsoluteStep({ t: real.t, value: real.pIn, ambientPressure: ATM }).map((f) => f.direction),
    ).toEqual(['reads-high']);
    // ... the machine can: the temperatures followed, the exponent did not move.
    const r = pressureRatioConsistency(real, AT);
    expect(r.verdict).toBe('consistent');
    expect(r.mixUp).toBeUndefined();
  });

  it('calls a change of the exponent that no mix-up explains unexplained (an efficiency step)', () => {
    // eta_p 0.8 -> 0.77: m grows 3.9 %, the pressures do not move. (A step to 0.74 would mimic the
    // outlet reading one ambient low at this ratio: see the module comment.)
    const r = pressureRatioConsistency(
      machine(gasCompressor({ m: (i) => (i >= 300 ? 0.4 / (1.4 * 0.77) : compression) })),
      AT,
    );
    expect(r.verdict).toBe('unexplained');
    expect(r.hypotheses).toHaveLength(4);
  });

  it('works on an expansion (turbine on superheated vapour or gas) as well', () => {
    const expansion = (0.8 * 0.4) / 1.4;
    const r = pressureRatioConsistency(
      machine({
        pIn: () => 10e5,
        pOut: () => 2e5,
        m: () => expansion,
        outOffset: (i) => (i >= 300 ? ATM : 0),
      }),
      AT,
    );
    expect(r.verdict).toBe('mix-up');
    expect(r.mixUp).toMatchObject({ tag: 'outlet', direction: 'reads-high' });
    expect(Math.abs(r.exponentBefore - expansion)).toBeLessThan(0.005);
  });

  it('rejects bad input with typed errors', () => {
    const s = machine(gasCompressor());
    expect(() => pressureRatioConsistency({ ...s, TOut: s.TOut.subarray(1) }, AT)).toThrow(
      LengthMismatchError,
    );
    expect(() => pressureRatioConsistency({ ...s, ambientPressure: 1.013 }, AT)).toThrow(
      MonitorBadInputError,
    );
    expect(() => pressureRatioConsistency(s, AT, { windowPoints: 1 })).toThrow(MonitorBadInputError);
    expect(() => pressureRatioConsistency(s, AT, { relativeTolerance: 0 })).toThrow(MonitorBadInputError);
    expect(() => pressureRatioConsistency(s, Number.NaN)).toThrow(MonitorBadInputError);
    expect(() => pressureRatioConsistency(s, T0 + 5 * MIN)).toThrow(TooFewPointsError);
    // A ratio near 1 (a fan) is refused.
    const fan = machine({ pIn: () => 1.0e5, pOut: () => 1.02e5, m: () => compression });
    expect(() => pressureRatioConsistency(fan, AT)).toThrow(MonitorBadInputError);
  });
});
