import { describe, expect, it } from 'vitest';
import { naturalGas } from './air.js';
import { idealGasMixture, pengRobinsonMixture } from './mixture.js';
import { largestCubicRoot, PengRobinsonMixture, PR_ZC, type PRResult } from './peng-robinson.js';
import { SPECIES } from './species.js';

const rel = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);
const out = (): PRResult => ({ Z: 0, hRes: 0, sRes: 0, cpRes: 0, dvdT: 0 });

describe('Peng-Robinson equation', () => {
  it('critical compressibility Zc = 0.30740 (Peng and Robinson 1976, a property of the equation)', () => {
    expect(PR_ZC).toBeCloseTo(0.3074, 5);
    for (const id of ['CH4', 'N2', 'CO2'] as const) {
      const s = SPECIES[id];
      const pr = new PengRobinsonMixture([s], [1], () => 0);
      // At Tc, Pc the cubic has a triple root: any species gives Zc.
      expect(pr.evaluate(s.Pc, s.Tc, out()).Z).toBeCloseTo(0.3074, 4);
    }
  });

  it('largestCubicRoot picks the vapour-like (largest) of three real roots', () => {
    // (Z - 0.1)(Z - 0.4)(Z - 0.9) = Z^3 - 1.4 Z^2 + 0.49 Z - 0.036
    expect(largestCubicRoot(-1.4, 0.49, -0.036)).toBeCloseTo(0.9, 12);
    // one real root: (Z - 2)(Z^2 + 1) = Z^3 - 2 Z^2 + Z - 2
    expect(largestCubicRoot(-2, 1, -2)).toBeCloseTo(2, 12);
  });

  it('ideal-gas limit at low pressure: Z -> 1 and departures -> 0 (common practice, no source)', () => {
    const gas = naturalGas({ CH4: 0.9, C2H6: 0.06, N2: 0.04 }, 'peng-robinson');
    const ideal = naturalGas({ CH4: 0.9, C2H6: 0.06, N2: 0.04 }, 'ideal');
    // Departures scale with p: at 1 Pa they are 1e-6 of those at 1 MPa (about 1e4 J/kg there).
    const a = gas.statePT(1, 300);
    const b = ideal.statePT(1, 300);
    expect(Math.abs(gas.compressibility(1, 300) - 1)).toBeLessThan(1e-7);
    expect(Math.abs(a.h - b.h)).toBeLessThan(0.05); // [J/kg]
    expect(Math.abs(a.s - b.s)).toBeLessThan(1e-4); // [J/(kg K)]
    expect(rel(gas.cp(300, 1), ideal.cp(300, 1))).toBeLessThan(1e-6);
    expect(Math.abs(gas.statePT(1e6, 300).h - ideal.statePT(1e6, 300).h)).toBeGreaterThan(1000);
  });

  it('residual cp matches the numerical derivative of residual h (consistency, no source)', () => {
    const s = SPECIES.CO2;
    const pr = new PengRobinsonMixture([s], [1], () => 0);
    const p = 5e6;
    const T = 350;
    const d = 0.01;
    const hp = pr.evaluate(p, T + d, out()).hRes;
    const hm = pr.evaluate(p, T - d, out()).hRes;
    expect(rel(pr.evaluate(p, T, out()).cpRes, (hp - hm) / (2 * d))).toBeLessThan(1e-6);
  });
});

describe('methane at pipeline conditions', () => {
  const ch4 = pengRobinsonMixture({ methane: 1 });
  it('Z(300 K, 1 MPa) within 0.6 % of 0.9826 (Setzmann and Wagner (1991) via NIST Webbook, from memory)', () => {
    expect(rel(ch4.compressibility(1e6, 300), 0.9826)).toBeLessThan(0.006);
  });
  it('Z(300 K, 5 MPa) within 2 % of 0.918 (Setzmann and Wagner (1991) via NIST Webbook, from memory)', () => {
    // Peng-Robinson is known to run 1-2 % low in Z for methane near ambient temperature.
    expect(rel(ch4.compressibility(5e6, 300), 0.918)).toBeLessThan(0.02);
  });
  it('Z falls with pressure at 300 K and is below 1 (methane is below its Boyle temperature, ~510 K; from memory)', () => {
    const z1 = ch4.compressibility(1e6, 300);
    const z5 = ch4.compressibility(5e6, 300);
    const z10 = ch4.compressibility(10e6, 300);
    expect(z1).toBeGreaterThan(z5);
    expect(z5).toBeGreaterThan(z10);
    expect(ch4.compressibility(5e6, 700)).toBeGreaterThan(1);
  });
});

describe('a natural gas (invented demo composition)', () => {
  const comp = { methane: 0.9, ethane: 0.05, propane: 0.02, nC4: 0.005, iC4: 0.005, N2: 0.01, CO2: 0.01 };
  const pr = naturalGas(comp, 'peng-robinson');
  const ideal = naturalGas(comp, 'ideal');
  it('heavier than methane, so Z at 7 MPa, 288 K is below that of pure methane (common practice, no source)', () => {
    const ch4 = pengRobinsonMixture({ CH4: 1 });
    expect(pr.compressibility(7e6, 288.15)).toBeLessThan(ch4.compressibility(7e6, 288.15));
    expect(pr.compressibility(7e6, 288.15)).toBeGreaterThan(0.7);
  });
  it('a throttling (constant h) from 70 to 20 bar cools the gas (Joule-Thomson effect, common practice)', () => {
    const inlet = pr.statePT(7e6, 300);
    const outlet = pr.statePH(2e6, inlet.h);
    expect(outlet.T).toBeLessThan(295);
    expect(outlet.T).toBeGreaterThan(260);
    // and an ideal gas does not cool at all
    expect(ideal.statePH(2e6, ideal.statePT(7e6, 300).h).T).toBeCloseTo(300, 6);
  });
  it('kij changes the answer, and aliases work in kij keys', () => {
    const withK = naturalGas(comp, 'peng-robinson', {
      kij: { methane: 0, 'CH4/CO2': 0.1 } as Record<string, number>,
    });
    expect(withK.compressibility(7e6, 288.15)).not.toBe(pr.compressibility(7e6, 288.15));
  });
  it('molar mass of the demo gas is 18.125 g/mol (sum of x M, IUPAC 2007 atomic weights, worked by hand)', () => {
    expect(pr.molarMass * 1000).toBeCloseTo(idealGasMixture(comp).molarMass * 1000, 12);
    expect(pr.molarMass * 1000).toBeCloseTo(18.125, 2);
  });
});
