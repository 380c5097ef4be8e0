import { describe, expect, it } from 'vitest';
import { BadInputError } from '../errors.js';
import { saturationPressure } from '../steam/index.js';
import { dryAir, humidAir, humidityRatio } from './air.js';
import fixture from './fixtures/gas-cases.json' with { type: 'json' };

const rel = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);

describe('humid air', () => {
  it('saturated at 20 degC, 101.325 kPa: W within 0.6 % of the IAPWS humid-air value (we omit the ~0.4 % enhancement factor)', () => {
    // Reference: saturated humid air by the IAPWS Guideline on an Equation of State for Humid Air in
    // Contact with Seawater and Ice (2010), via python3-iapws iapws.humidAir (fixtures/gas-cases.json,
    // made by scripts/make-air-fixture.py): W = 0.014763 kg/kg.
    const ref = fixture.saturatedHumidAir;
    const gas = humidAir({ relativeHumidity: 1, T: ref.T, p: ref.p });
    expect(rel(humidityRatio(gas), ref.humidityRatio)).toBeLessThan(0.006);
    // The omitted enhancement factor makes ours the lower one.
    expect(humidityRatio(gas)).toBeLessThan(ref.humidityRatio);
  });

  it('RH and humidity ratio inputs agree: W = 0.621945 p_w/(p - p_w) (ASHRAE Handbook Fundamentals ch. 1 Eq. 20)', () => {
    const p = 101_325;
    const pw = 0.5 * saturationPressure(293.15);
    const W = (0.621945 * pw) / (p - pw);
    const a = humidAir({ relativeHumidity: 0.5, T: 293.15, p });
    const b = humidAir({ humidityRatio: W });
    expect(rel(a.composition.H2O!, pw / p)).toBeLessThan(1e-12);
    expect(rel(b.composition.H2O!, pw / p)).toBeLessThan(2e-4); // 0.621945 vs our M_w/M_a
    expect(rel(humidityRatio(a), W)).toBeLessThan(2e-4);
  });

  it('water vapour lowers the molar mass and raises cp (common practice, no source)', () => {
    const wet = humidAir({ humidityRatio: 0.02 });
    expect(wet.molarMass).toBeLessThan(dryAir().molarMass);
    expect(wet.cp(300, 1e5)).toBeGreaterThan(dryAir().cp(300, 1e5));
    expect(humidAir({ humidityRatio: 0 }).molarMass).toBeCloseTo(dryAir().molarMass, 14);
  });

  it('Gibbs relation (dh/ds)_p = T to 1e-5 (dh = T ds + v dp)', () => {
    const gas = humidAir({ relativeHumidity: 0.6, T: 303.15, p: 101_325 });
    for (const T of [280, 350, 600]) {
      const a = gas.statePT(1e5, T - 0.01);
      const b = gas.statePT(1e5, T + 0.01);
      expect(rel((b.h - a.h) / (b.s - a.s), T)).toBeLessThan(1e-5);
    }
  });

  it('bad inputs are refused: RH in percent, negative W', () => {
    expect(() => humidAir({ relativeHumidity: 50, T: 293.15, p: 101_325 })).toThrow(BadInputError);
    expect(() => humidAir({ humidityRatio: -0.01 })).toThrow(BadInputError);
  });
});
