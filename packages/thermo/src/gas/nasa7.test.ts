import { describe, expect, it } from 'vitest';
import { cpR, hR, NASA7, s0R } from './nasa7.js';

const R = 8.314_462_618; // [J/(mol K)], CODATA 2018
const T0 = 298.15;

describe('NASA 7-coefficient polynomials at 298.15 K', () => {
  // Enthalpy of formation: H(298.15)/R from the polynomial equals the published Hf/R.
  // Source: McBride, Zehe and Gordon, NASA/TP-2002-211556, the Hf(298.15) listed with each species
  // (values in kJ/mol, from memory of that listing).
  const hf: [keyof typeof NASA7, number][] = [
    ['CO2', -393.51],
    ['H2O', -241.826],
    ['CH4', -74.6],
    ['CO', -110.535],
    ['C2H6', -83.852],
    ['C3H8', -104.68],
    ['N2', 0],
    ['O2', 0],
    ['H2', 0],
  ];
  it.each(hf)('%s: H(298.15)/R = Hf/R (NASA/TP-2002-211556, from memory)', (id, hfKJ) => {
    expect(Math.abs(R * hR(NASA7[id].low, T0) - hfKJ * 1000)).toBeLessThan(10); // [J/mol]
  });

  // cp and S at 298.15 K, 1 bar: JANAF Thermochemical Tables, 4th ed. (Chase, 1998), from memory.
  const cp: [keyof typeof NASA7, number][] = [
    ['N2', 29.124],
    ['O2', 29.376],
    ['Ar', 20.786],
    ['CO2', 37.135],
    ['H2O', 33.59],
    ['CH4', 35.695],
    ['H2', 28.836],
  ];
  it.each(cp)('%s: cp(298.15) in J/(mol K) (JANAF 4th ed., from memory)', (id, value) => {
    expect(Math.abs(R * cpR(NASA7[id].low, T0) - value)).toBeLessThan(0.01);
  });

  const s: [keyof typeof NASA7, number][] = [
    ['N2', 191.609],
    ['O2', 205.147],
    ['Ar', 154.846],
    ['CO2', 213.785],
    ['H2O', 188.835],
    ['H2', 130.68],
  ];
  it.each(s)('%s: S(298.15, 1 bar) in J/(mol K) (JANAF 4th ed., from memory)', (id, value) => {
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
