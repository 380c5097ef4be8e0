import { describe, expect, it } from 'vitest';
import { OutOfRangeError } from '../errors.js';
import { DRY_AIR, dryAir, naturalGas } from './air.js';
import { CompositionSumError, UnknownSpeciesError } from './errors.js';
import fixture from './fixtures/air-lemmon2000.json' with { type: 'json' };
import { type GasModel, idealGasMixture, pengRobinsonMixture } from './mixture.js';
import { normaliseComposition, resolveSpecies, speciesList } from './species.js';

const rel = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);

/** An invented pipeline gas for the tests (demo composition, not a measured analysis). */
const PIPELINE_GAS = {
  methane: 0.9,
  ethane: 0.05,
  propane: 0.02,
  nC4: 0.005,
  iC4: 0.005,
  N2: 0.01,
  CO2: 0.01,
};

describe('dry air, ideal gas, against the Lemmon et al. (2000) equation (python3-iapws, fixtures/air-lemmon2000.json)', () => {
  const air = dryAir();
  const ref0 = fixture.points[0]!;
  const our0 = air.statePT(ref0.p, ref0.T);
  for (const pt of fixture.points.slice(1)) {
    it(`h and s changes from 250 K to ${pt.T} K at 100 kPa agree within 0.3 %`, () => {
      const st = air.statePT(pt.p, pt.T);
      expect(rel(st.h - our0.h, pt.h - ref0.h)).toBeLessThan(0.003);
      expect(rel(st.s - our0.s, pt.s - ref0.s)).toBeLessThan(0.003);
    });
  }
  it('cp within 0.3 % from 250 K to 1000 K', () => {
    for (const pt of fixture.points) expect(rel(air.cp(pt.T, pt.p), pt.cp)).toBeLessThan(0.003);
  });
  it('molar mass 28.966 g/mol vs 28.9655 g/mol of the reference equation (python3-iapws Air.M)', () => {
    expect(rel(air.molarMass * 1000, fixture.molarMass_g_per_mol)).toBeLessThan(2e-4);
  });
  it('R = R_molar/M and v = R T/p (definition of the ideal gas)', () => {
    expect(air.R).toBeCloseTo(8.314462618 / air.molarMass, 10);
    const st = air.statePT(2e5, 400);
    expect(st.v).toBeCloseTo((air.R * 400) / 2e5, 12);
    expect(air.compressibility(2e5, 400)).toBe(1);
  });
  it('h = 0 at 298.15 K (our reference state)', () => {
    expect(Math.abs(air.statePT(101325, 298.15).h)).toBeLessThan(1e-9);
  });
  it('the dry-air composition sums to 1.000056 before normalising (U.S. Standard Atmosphere 1976 + 400 ppm CO2)', () => {
    const sum = Object.values(DRY_AIR).reduce((a, b) => a + (b ?? 0), 0);
    expect(sum).toBeCloseTo(1.000056, 9);
    expect(Object.values(air.composition).reduce((a, b) => a + (b ?? 0), 0)).toBeCloseTo(1, 14);
  });
});

const models: [string, GasModel][] = [
  ['dry air (ideal)', dryAir()],
  ['pipeline gas (ideal)', naturalGas(PIPELINE_GAS, 'ideal')],
  ['pipeline gas (Peng-Robinson)', naturalGas(PIPELINE_GAS, 'peng-robinson')],
  ['hydrogen-rich gas (Peng-Robinson)', pengRobinsonMixture({ H2: 0.7, CO: 0.2, CO2: 0.05, N2: 0.05 })],
  [
    'with H2S and pentanes (Peng-Robinson)',
    pengRobinsonMixture({ CH4: 0.9, H2S: 0.05, nC5: 0.03, iC5: 0.02 }),
  ],
];
const points: [number, number][] = [
  [1e5, 300],
  [2e6, 350],
  [7e6, 290],
  [5e5, 800],
  [3e6, 1400],
];

describe('Gibbs relation (dh/ds)_p = T, finite differences to 1e-5 (DESIGN.md section 5; dh = T ds + v dp)', () => {
  for (const [label, gas] of models) {
    it(label, () => {
      for (const [p, T] of points) {
        const d = T * 1e-4;
        const a = gas.statePT(p, T - d);
        const b = gas.statePT(p, T + d);
        expect(rel((b.h - a.h) / (b.s - a.s), T)).toBeLessThan(1e-5);
        // cp is the slope of h along the isobar.
        expect(rel((b.h - a.h) / (2 * d), gas.cp(T, p))).toBeLessThan(1e-5);
      }
    });
  }
});

describe('round trips statePH and statePS give back T (common practice, no source)', () => {
  for (const [label, gas] of models) {
    it(label, () => {
      for (const [p, T] of [...points, [1e5, 200] as [number, number], [1e5, 999.9] as [number, number]]) {
        const st = gas.statePT(p, T);
        expect(gas.statePH(p, st.h).T).toBeCloseTo(T, 7);
        expect(gas.statePS(p, st.s).T).toBeCloseTo(T, 7);
      }
    });
  }

  it('an isentropic expansion of air satisfies the integral of cp/T dT = R ln(p2/p1) (ideal-gas identity)', () => {
    const air = dryAir();
    const s1 = air.statePT(10e5, 400).s;
    const T2 = air.statePS(2e5, s1).T;
    // Simpson's rule on cp/T from T2 to 400 K, 200 intervals.
    const n = 200;
    const dT = (400 - T2) / n;
    let sum = 0;
    for (let i = 0; i <= n; i++) {
      const T = T2 + i * dT;
      const w = i === 0 || i === n ? 1 : i % 2 === 1 ? 4 : 2;
      sum += (w * air.cp(T, 1e5)) / T;
    }
    expect(rel((sum * dT) / 3, air.R * Math.log(10e5 / 2e5))).toBeLessThan(1e-8);
  });
});

describe('range and input checks', () => {
  it('temperatures outside the fits are refused with the limits', () => {
    const air = dryAir();
    expect(() => air.statePT(1e5, 150)).toThrow(OutOfRangeError);
    expect(() => air.statePT(1e5, 7000)).toThrow(OutOfRangeError);
    expect(() => air.statePT(0, 300)).toThrow(OutOfRangeError);
    try {
      air.statePT(1e5, 150);
    } catch (e) {
      expect((e as OutOfRangeError).min).toBe(200);
      expect((e as OutOfRangeError).value).toBe(150);
    }
  });
  it('an enthalpy beyond the range is refused, not clamped', () => {
    expect(() => dryAir().statePH(1e5, 1e9)).toThrow(OutOfRangeError);
  });
  it('models with fits that start above 200 K say so in notes', () => {
    const gas = idealGasMixture({ CH4: 0.99, H2S: 0.01 });
    expect(gas.notes.join()).toMatch(/H2S: NASA fit starts at 300 K/);
    expect(dryAir().notes).toEqual([]);
  });
});

describe('compositions', () => {
  it('aliases resolve: nC4, n-C4H10 and butane are one species', () => {
    expect(resolveSpecies('nC4')).toBe('n-C4H10');
    expect(resolveSpecies('n-C4H10')).toBe('n-C4H10');
    expect(resolveSpecies('Butane')).toBe('n-C4H10');
    expect(resolveSpecies('iC4')).toBe('i-C4H10');
    expect(resolveSpecies('methane')).toBe('CH4');
    expect(normaliseComposition({ nC4: 0.5, butane: 0.5 })).toEqual({ 'n-C4H10': 1 });
  });
  it('an unknown species is GAS_UNKNOWN_SPECIES listing the accepted names', () => {
    try {
      normaliseComposition({ methane: 0.9, unobtainium: 0.1 });
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(UnknownSpeciesError);
      expect((e as UnknownSpeciesError).code).toBe('GAS_UNKNOWN_SPECIES');
      expect((e as UnknownSpeciesError).message).toContain('n-C4H10 (nC4');
    }
  });
  it('a sum off by more than 1 % is GAS_COMPOSITION_SUM; within 1 % it is normalised', () => {
    expect(() => normaliseComposition({ CH4: 0.9, C2H6: 0.05 })).toThrow(CompositionSumError);
    const x = normaliseComposition({ CH4: 0.95, C2H6: 0.055 });
    expect(x.CH4! + x.C2H6!).toBeCloseTo(1, 15);
    expect(() => normaliseComposition({ CH4: 1.2, C2H6: -0.2 })).toThrow(CompositionSumError);
  });
  it('mole percent is accepted when said so', () => {
    expect(normaliseComposition({ CH4: 95, N2: 5 }, { unit: 'percent' })).toEqual({ CH4: 0.95, N2: 0.05 });
    expect(() => normaliseComposition({ CH4: 95, N2: 5 })).toThrow(CompositionSumError);
  });
  it('speciesList holds at least the 15 species of the brief', () => {
    const ids = speciesList().map((s) => s.id);
    for (const id of [
      'N2',
      'O2',
      'Ar',
      'CO2',
      'H2O',
      'CH4',
      'C2H6',
      'C3H8',
      'n-C4H10',
      'i-C4H10',
      'n-C5H12',
      'H2',
      'CO',
      'He',
      'H2S',
    ]) {
      expect(ids).toContain(id);
    }
  });
  it('molar mass of the mixture is the mole-weighted sum (definition)', () => {
    const gas = naturalGas({ CH4: 0.5, CO2: 0.5 }, 'ideal');
    expect(gas.molarMass).toBeCloseTo(0.5 * (0.0160425 + 0.0440095), 7);
  });
});
