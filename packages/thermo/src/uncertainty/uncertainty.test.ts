import { describe, expect, it } from 'vitest';
import type { MachineInput } from '../machines/types.js';
import { perfectGas } from '../perfect-gas.js';
import {
  evaluateMachineWithUncertainty,
  gaussian,
  machineMonteCarlo,
  mulberry32,
  propagateGum,
  propagateMonteCarlo,
  standardUncertainty,
} from './index.js';

const R = 287;
const k = 1.4;
const cp = (k * R) / (k - 1);
const air = perfectGas(R, cp, 'air (k = 1.4)');

describe('GUM propagation (JCGM 100:2008 eq. 10)', () => {
  it('is exact for a linear model: u^2 = sum c_i^2 u_i^2', () => {
    const r = propagateGum((x) => Float64Array.of(3 * x[0]! - 2 * x[1]!, x[0]! + x[1]!), [1, 2], [0.1, 0.2]);
    expect(r.uncertainty[0]).toBeCloseTo(Math.sqrt(0.09 + 0.16), 12); // GUM eq. 10 by hand
    expect(r.uncertainty[1]).toBeCloseTo(Math.sqrt(0.01 + 0.04), 12);
  });

  it('gives the relative-uncertainty rule for a product (GUM 5.1.6)', () => {
    const r = propagateGum((x) => ({ y: x[0]! * x[1]! }), [10, 5], [0.1, 0.1]);
    // u(y)/y = sqrt((0.1/10)^2 + (0.1/5)^2) for y = x1 x2 (GUM 5.1.6, exponents 1).
    expect(r.uncertainty.y! / 50).toBeCloseTo(Math.hypot(0.01, 0.02), 12);
  });

  it('treats u = 0 inputs as exact and rejects a negative uncertainty', () => {
    const r = propagateGum((x) => ({ y: x[0]! * 2 }), [3], [0]);
    expect(r.uncertainty.y).toBe(0);
    expect(() => propagateGum((x) => ({ y: x[0]! }), [3], [-1])).toThrow(/uncertainty\[0\]/);
  });

  it('uses a one-sided difference where the model fails on one side', () => {
    const f = (x: Float64Array) => {
      if (x[0]! < 0) throw new Error('outside the range');
      return { y: 2 * x[0]! };
    };
    expect(propagateGum(f, [0], [0.5]).uncertainty.y).toBeCloseTo(1, 12);
  });

  it('converts absolute, %-of-reading and %-of-span specifications', () => {
    expect(standardUncertainty({ kind: 'absolute', value: 0.5 }, 400)).toBe(0.5);
    expect(standardUncertainty({ kind: 'reading', percent: 0.5 }, 2e6)).toBeCloseTo(1e4, 9);
    expect(standardUncertainty({ kind: 'span', percent: 0.1, span: 4e6 }, 2e6)).toBeCloseTo(4e3, 9);
  });
});

describe('Monte Carlo (JCGM 101:2008)', () => {
  it('the seeded Gaussian generator has mean 0 and standard deviation 1 (common practice, no source)', () => {
    const normal = gaussian(mulberry32(42));
    let s = 0;
    let ss = 0;
    const n = 200_000;
    for (let i = 0; i < n; i++) {
      const z = normal();
      s += z;
      ss += z * z;
    }
    expect(Math.abs(s / n)).toBeLessThan(0.01);
    expect(Math.sqrt(ss / n)).toBeCloseTo(1, 2);
  });

  it('is reproducible with a seed and matches GUM on a linear model', () => {
    const f = (x: Float64Array) => ({ y: 3 * x[0]! - 2 * x[1]! });
    const a = propagateMonteCarlo(f, [1, 2], [0.1, 0.2], { trials: 20_000, seed: 7 });
    const b = propagateMonteCarlo(f, [1, 2], [0.1, 0.2], { trials: 20_000, seed: 7 });
    expect(a.y!.uncertainty).toBe(b.y!.uncertainty);
    expect(a.y!.uncertainty).toBeCloseTo(0.5, 1); // sqrt(0.09 + 0.16) = 0.5, GUM eq. 10
  });
});

describe('machine uncertainty: GUM and Monte Carlo agree within 10 %', () => {
  const T2sCompressor = 300 * 8 ** ((k - 1) / k);
  const cases: [string, MachineInput][] = [
    [
      'gas compressor 1 -> 8 bar, 80 %',
      {
        kind: 'compressor',
        fluid: air,
        inlet: { p: 1e5, T: 300 },
        outlet: { p: 8e5, T: 300 + (T2sCompressor - 300) / 0.8 },
        massFlow: 5,
      },
    ],
    [
      'gas expander 10 -> 1 bar, 88 %',
      {
        kind: 'turbine',
        fluid: air,
        inlet: { p: 1e6, T: 1200 },
        outlet: { p: 1e5, T: 1200 - 0.88 * (1200 - 1200 * 0.1 ** ((k - 1) / k)) },
        massFlow: 20,
      },
    ],
  ];
  const u = {
    'inlet.p': { kind: 'reading', percent: 0.5 },
    'inlet.T': { kind: 'absolute', value: 1 },
    'outlet.p': { kind: 'reading', percent: 0.5 },
    'outlet.T': { kind: 'absolute', value: 1 },
    massFlow: { kind: 'reading', percent: 1 },
  } as const;
  for (const [name, input] of cases) {
    it(name, () => {
      const gum = evaluateMachineWithUncertainty(input, u);
      const mc = machineMonteCarlo(input, u, { trials: 20_000, seed: 3 });
      for (const key of ['isentropicEfficiency', 'specificWork', 'power', 'entropyGeneration'] as const) {
        const a = gum.uncertainty[key]!;
        const b = mc[key]!.uncertainty;
        expect(a).toBeGreaterThan(0);
        // JCGM 101:2008 section 8 validates GUM against MC; 10 % is the project's acceptance.
        expect(Math.abs(a / b - 1)).toBeLessThan(0.1);
      }
    });
  }
});

describe('second-law checks against the uncertainty', () => {
  // An expander measured 0.2 K below its isentropic outlet: impossible, but inside 1 K instruments.
  const T2s = 1200 * 0.1 ** ((k - 1) / k);
  const input: MachineInput = {
    kind: 'turbine',
    fluid: air,
    inlet: { p: 1e6, T: 1200 },
    outlet: { p: 1e5, T: T2s - 0.2 },
  };

  it('without uncertainty the violation is flagged', () => {
    const r = evaluateMachineWithUncertainty(input, {});
    expect(r.result.flags).toContain('second-law-violation');
    expect(r.result.valid).toBe(false);
  });

  it('within 2 u of zero it is not an instrument fault', () => {
    const r = evaluateMachineWithUncertainty(input, { 'outlet.T': { kind: 'absolute', value: 1 } });
    expect(r.result.flags).not.toContain('second-law-violation');
    expect(r.result.flags).not.toContain('efficiency-above-one');
    expect(r.result.valid).toBe(true);
  });

  it('beyond 2 u it stays an instrument fault', () => {
    const r = evaluateMachineWithUncertainty(
      { ...input, outlet: { p: 1e5, T: T2s - 5 } },
      { 'outlet.T': { kind: 'absolute', value: 1 } },
    );
    expect(r.result.flags).toContain('second-law-violation');
    expect(r.result.valid).toBe(false);
  });

  it('an uncertainty on an input that is not given is a bad input naming it', () => {
    expect(() =>
      evaluateMachineWithUncertainty(input, { shaftPower: { kind: 'absolute', value: 1 } }),
    ).toThrow(/uncertainty\.shaftPower/);
  });
});
