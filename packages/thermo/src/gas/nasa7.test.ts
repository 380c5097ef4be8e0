import { describe, expect, it } from 'vitest';
import gasCases from './fixtures/gas-cases.json' with { type: 'json' };
import { cpR, hR, NASA7, s0R } from './nasa7.js';

const R = 8.314_462_618; // [J/(mol K)], CODATA 2018
const T0 = 298.15;

describe('NASA 7-coefficient polynomials at 298.15 K', () => {
  // Enthalpy of formation: H(298.15)/R from the polynomial equals Hf(298.15) of the NASA Glenn database
  // (McBride, Zehe and Gordon, NASA/TP-2002-211556) as its data file thermo.inp, distributed with NASA's
  // CEA program, gives it on each species' second line [J/mol] (read 2026-12). N2, O2 and H2 are
  // reference elements there: zero by definition.
  const hf: [keyof typeof NASA7, number][] = [
    ['CO2', -393_510.0],
    ['H2O', -241_826.0],
    ['CH4', -74_600.0],
    ['CO', -110_535.196],
    ['C2H6', -83_851.544],
    ['C3H8', -104_680.0],
    ['N2', 0],
    ['O2', 0],
    ['H2', 0],
  ];
  it.each(hf)('%s: H(298.15)/R = Hf/R (NASA/TP-2002-211556, thermo.inp)', (id, hfJ) => {
    expect(Math.abs(R * hR(NASA7[id].low, T0) - hfJ)).toBeLessThan(10); // [J/mol]
  });

  // cp at 298.15 K in J/(mol K).
  it('N2: 29.124 (NIST-JANAF Thermochemical Tables, table N-023, Chase 1998)', () => {
    expect(Math.abs(R * cpR(NASA7.N2.low, T0) - 29.124)).toBeLessThan(0.01);
  });
  it('Ar: 5/2 R (monatomic ideal gas, translation only; no electronic excitation at 298 K)', () => {
    expect(Math.abs(cpR(NASA7.Ar.low, T0) - 2.5)).toBeLessThan(1e-9);
  });
  it('H2O: cp0/R of the IAPWS-95 ideal-gas part (python3-iapws, fixtures/gas-cases.json)', () => {
    const ref = gasCases.waterVapourIdealGas;
    // 0.01 J/(mol K), the tolerance of the other species, is 1.2e-3 in cp/R.
    expect(Math.abs(cpR(NASA7.H2O.low, ref.T) - ref.cpOverR)).toBeLessThan(0.01 / R);
  });
  // Not re-read against a published table: JANAF 4th ed. (Chase, 1998), from memory.
  const cp: [keyof typeof NASA7, number][] = [
    ['O2', 29.376],
    ['CO2', 37.135],
    ['CH4', 35.695],
    ['H2', 28.836],
  ];
  it.each(cp)('%s: cp(298.15) in J/(mol K) (JANAF 4th ed., from memory)', (id, value) => {
    expect(Math.abs(R * cpR(NASA7[id].low, T0) - value)).toBeLessThan(0.01);
  });

  // S(298.15 K, 1 bar): CODATA Key Values for Thermodynamics (Cox, Wagman and Medvedev, 1989), as
  // the NIST Chemistry WebBook (SRD 69) lists them under each species ("CODATA Review value", with
  // uncertainties of 0.003 to 0.010 J/(mol K)); H2O's value is from memory of the same table.
  const s: [keyof typeof NASA7, number, string][] = [
    ['N2', 191.609, 'CODATA'],
    ['O2', 205.152, 'CODATA'],
    ['Ar', 154.846, 'CODATA'],
    ['CO2', 213.785, 'CODATA'],
    ['H2', 130.68, 'CODATA'],
    ['H2O', 188.835, 'CODATA, from memory'],
  ];
  it.each(s)('%s: S(298.15, 1 bar) = %s J/(mol K) (%s)', (id, value) => {
    expect(Math.abs(R * s0R(NASA7[id].low, T0) - value)).toBeLessThan(0.01);
  });
});

describe('continuity of the two ranges at 1000 K (property of the fits, NASA/TP-2002-211556 section 2)', () => {
  for (const [id, e] of Object.entries(NASA7)) {
    it(id, () => {
      // The pentane fits (298.15-5000 K) join slightly less tightly than the others.
      expect(Math.abs(cpR(e.high, 1000) - cpR(e.low, 1000))).toBeLessThan(2e-4);
      expect(Math.abs(hR(e.high, 1000) - hR(e.low, 1000))).toBeLessThan(0.05); // [K]
      expect(Math.abs(s0R(e.high, 1000) - s0R(e.low, 1000))).toBeLessThan(1e-4);
    });
  }
});
