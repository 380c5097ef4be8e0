import { describe, expect, it } from 'vitest';
import { BadInputError } from '../errors.js';
import type { Fluid } from '../fluid.js';
import { incompressibleLiquid } from '../liquid.js';
import { perfectGas } from '../perfect-gas.js';
import steamCases from '../steam/fixtures/machine-cases.json' with { type: 'json' };
import {
  compressibilityCoefficient,
  evaluateMachine,
  evaluatePump,
  evaluateTurbine,
  polytropicEfficiencyIdealGas,
  STANDARD_GRAVITY,
} from './index.js';

// Air as a constant-heat-capacity ideal gas: R = 287 J/(kg K), cp = 1004.5 J/(kg K), k = 1.4
// (cp = k R / (k - 1) exactly; common practice, no source).
const R = 287;
const k = 1.4;
const cp = (k * R) / (k - 1);
const air = perfectGas(R, cp, 'air (k = 1.4)');

describe('compressor on a constant-cp ideal gas', () => {
  // 100 kPa, 300 K to 800 kPa at eta_s = 0.80: about the inputs of a common textbook example; the expected
  // figures are computed from the relations named beside each check, not taken from the book.
  const p1 = 100e3;
  const T1 = 300;
  const p2 = 800e3;
  // T_out,s = T_in (p2/p1)^((k-1)/k): the isentropic relation of a perfect gas (any thermodynamics text).
  const T2s = T1 * (p2 / p1) ** ((k - 1) / k);
  const T2 = T1 + (T2s - T1) / 0.8;

  it('reproduces T_out,s = T_in (p_out/p_in)^((k-1)/k) exactly and eta_s = (T2s - T1)/(T2 - T1)', () => {
    const r = evaluateMachine({
      kind: 'compressor',
      fluid: air,
      inlet: { p: p1, T: T1 },
      outlet: { p: p2, T: T2 },
      massFlow: 2,
    });
    expect(r.outletIsentropic.T).toBeCloseTo(T2s, 9); // perfect-gas isentropic relation
    expect(r.isentropicEfficiency).toBeCloseTo(0.8, 12); // constructed at 0.8
    expect(r.specificWork).toBeCloseTo(cp * (T2 - T1), 6); // w = cp dT for a perfect gas
    expect(r.power).toBeCloseTo(2 * cp * (T2 - T1), 5);
    expect(r.entropyGeneration).toBeCloseTo(cp * Math.log(T2 / T1) - R * Math.log(p2 / p1), 9);
    expect(r.valid).toBe(true);
    expect(r.flags).toEqual([]);
  });

  it('Schultz polytropic efficiency equals the ideal-gas logarithmic form', () => {
    const r = evaluateMachine({
      kind: 'compressor',
      fluid: air,
      inlet: { p: p1, T: T1 },
      outlet: { p: p2, T: T2 },
    });
    const logForm = polytropicEfficiencyIdealGas(p1, T1, p2, T2, k);
    // Schultz (1962) / ASME PTC 10: f = 1 and eta_p = ((k-1)/k) ln(p2/p1)/ln(T2/T1) for a perfect gas.
    expect(r.schultzFactor).toBeCloseTo(1, 12);
    expect(r.polytropicEfficiency).toBeCloseTo(logForm, 12);
    // Polytropic efficiency exceeds isentropic efficiency in compression (reheat effect; any turbomachinery text).
    expect(r.polytropicEfficiency!).toBeGreaterThan(r.isentropicEfficiency!);
    // n/(n-1) = ln(p2/p1)/ln(T2/T1) for an ideal gas on a polytropic path (pv^n = const, pv = RT).
    const n = r.polytropicExponent!;
    expect(n / (n - 1)).toBeCloseTo(Math.log(p2 / p1) / Math.log(T2 / T1), 10);
    expect(r.polytropicHead).toBeCloseTo((n / (n - 1)) * R * (T2 - T1), 6);
  });

  it('flags a compressor outlet colder than the isentropic outlet as an instrument fault', () => {
    const r = evaluateMachine({
      kind: 'compressor',
      fluid: air,
      inlet: { p: p1, T: T1 },
      outlet: { p: p2, T: T2s - 5 },
    });
    expect(r.flags).toContain('outlet-colder-than-isentropic');
    expect(r.flags).toContain('second-law-violation');
    expect(r.flags).toContain('efficiency-above-one');
    expect(r.valid).toBe(false);
    // Still reported, for diagnosis.
    expect(r.isentropicEfficiency!).toBeGreaterThan(1);
  });

  it('rejects a compressor outlet pressure below the inlet pressure', () => {
    expect(() =>
      evaluateMachine({ kind: 'compressor', fluid: air, inlet: { p: p2, T: T1 }, outlet: { p: p1, T: T2 } }),
    ).toThrow(BadInputError);
  });

  it('turns an actual inlet volume flow into mass flow with the inlet density', () => {
    const r = evaluateMachine({
      kind: 'compressor',
      fluid: air,
      inlet: { p: p1, T: T1 },
      outlet: { p: p2, T: T2 },
      volumeFlow: 3,
    });
    expect(r.massFlow).toBeCloseTo((3 * p1) / (R * T1), 10); // rho = p/(R T), ideal gas
  });
});

describe('turbine / expander', () => {
  it('gas expander on a perfect gas: eta_s = (T1 - T2)/(T1 - T2s)', () => {
    const T1 = 1200;
    const T2s = T1 * (1 / 10) ** ((k - 1) / k); // perfect-gas isentropic relation
    const T2 = T1 - 0.88 * (T1 - T2s);
    const r = evaluateTurbine({
      kind: 'turbine',
      fluid: air,
      inlet: { p: 1e6, T: T1 },
      outlet: { p: 1e5, T: T2 },
      massFlow: 10,
    });
    expect(r.isentropicEfficiency).toBeCloseTo(0.88, 12);
    expect(r.specificWork).toBeCloseTo(cp * (T1 - T2), 6); // positive out of a turbine
    expect(r.isentropicSpecificWork).toBeCloseTo(cp * (T1 - T2s), 6);
    expect(r.power).toBeCloseTo(10 * cp * (T1 - T2), 4);
    expect(r.entropyGeneration!).toBeGreaterThan(0);
    expect(r.valid).toBe(true);
  });

  it('rejects a turbine outlet pressure above the inlet pressure, naming the field', () => {
    try {
      evaluateTurbine({ kind: 'turbine', fluid: air, inlet: { p: 1e5, T: 600 }, outlet: { p: 2e5, T: 500 } });
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(BadInputError);
      expect((e as BadInputError).field).toBe('outlet.p');
      expect((e as BadInputError).code).toBe('THERMO_BAD_INPUT');
    }
  });

  it('flags an expander outlet hotter-than-possible (efficiency above one) as an instrument fault', () => {
    const T2s = 1200 * 0.1 ** ((k - 1) / k);
    const r = evaluateTurbine({
      kind: 'turbine',
      fluid: air,
      inlet: { p: 1e6, T: 1200 },
      outlet: { p: 1e5, T: T2s - 3 },
    });
    expect(r.flags).toContain('second-law-violation');
    expect(r.flags).toContain('efficiency-above-one');
    expect(r.valid).toBe(false);
  });

  // A perfect gas given a saturation line, to test the wet-outlet logic before IF97 is at hand
  // (the IF97 cases are in steam-machines.test.ts).
  const condensing: Fluid = { ...air, saturationTemperature: (p: number) => 300 + p / 1e5 };

  it('wet outlet within the margin: h_out from the energy balance h_in - P/m', () => {
    const r = evaluateTurbine({
      kind: 'turbine',
      fluid: condensing,
      inlet: { p: 1e6, T: 900 },
      outlet: { p: 1e5, T: 302 }, // saturation 301 K, margin 2 K
      massFlow: 4,
      shaftPower: 1.2e6,
    });
    expect(r.flags).toContain('wet-outlet-energy-balance');
    expect(r.outlet.h).toBeCloseTo(r.inlet.h - 1.2e6 / 4, 6); // energy balance, common practice
    expect(r.specificWork).toBeCloseTo(3e5, 6);
    expect(r.power).toBeCloseTo(1.2e6, 3);
  });

  it('wet outlet without power and flow: outlet undetermined, no efficiency, never a guess', () => {
    const r = evaluateTurbine({
      kind: 'turbine',
      fluid: condensing,
      inlet: { p: 1e6, T: 900 },
      outlet: { p: 1e5, T: 301 },
    });
    expect(r.flags).toContain('outlet-undetermined');
    expect(r.isentropicEfficiency).toBeUndefined();
    expect(r.specificWork).toBeUndefined();
    expect(Number.isNaN(r.outlet.h)).toBe(true);
    expect(r.valid).toBe(false);
  });

  it('generator electrical power and driver efficiency give shaft = electrical / eta', () => {
    const r = evaluateTurbine({
      kind: 'turbine',
      fluid: condensing,
      inlet: { p: 1e6, T: 900 },
      outlet: { p: 1e5, T: 301 },
      massFlow: 4,
      electricalPower: 0.98e6,
      driverEfficiency: 0.98,
    });
    expect(r.shaftPowerUsed).toBeCloseTo(1e6, 6);
    expect(r.specificWork).toBeCloseTo(2.5e5, 6);
  });

  it('electrical power without a driver efficiency is a bad input naming driverEfficiency', () => {
    expect(() =>
      evaluateTurbine({
        kind: 'turbine',
        fluid: air,
        inlet: { p: 1e6, T: 900 },
        outlet: { p: 1e5, T: 600 },
        electricalPower: 1e6,
      }),
    ).toThrow(/driverEfficiency/);
  });
});

describe('pump', () => {
  // Inputs after a common textbook Rankine cycle: saturated liquid at 75 kPa pumped to 3 MPa, water
  // taken as incompressible with v1 = v_f(75 kPa) from IAPWS-IF97 via python3-iapws
  // (steam/fixtures/machine-cases.json, made by scripts/make-iapws-fixture.py).
  const sat75 = steamCases.saturation.find((s) => s.p === 75e3)!;
  const liquid = incompressibleLiquid(1 / sat75.vf, 4180, 'water as incompressible');

  it('incompressible liquid: w_s = v dp exactly, and within 0.1 % of the IF97 pump work', () => {
    const r = evaluatePump({
      kind: 'pump',
      fluid: liquid,
      inlet: { p: 75e3, T: sat75.T },
      outlet: { p: 3e6, T: sat75.T },
    });
    expect(r.isentropicSpecificWork).toBeCloseTo(sat75.vf * (3e6 - 75e3), 9); // w_s = v dp, exact identity
    // IF97 w_s = h(3 MPa, s1) - h1 for the same pump (python3-iapws, machine-cases.json): 3.03 kJ/kg.
    const pump = steamCases.pump;
    const wsIF97 = pump.outletIsentropic.h - pump.inlet.h;
    expect(Math.abs(r.isentropicSpecificWork / wsIF97 - 1)).toBeLessThan(1e-3);
    expect(r.isentropicEfficiency).toBeCloseTo(1, 12); // no temperature rise: isentropic
  });

  it('head, hydraulic power and efficiency, thermodynamic (ISO 5198) efficiency', () => {
    // 50 kg/s of a 1000 kg/m3, 4186 J/(kg K) liquid through 1 MPa: H = 1e6/(1000 g) = 101.97 m (ISO 80000-3 g).
    const water = incompressibleLiquid(1000, 4186);
    const dT = 0.06;
    const r = evaluatePump({
      kind: 'pump',
      fluid: water,
      inlet: { p: 2e5, T: 293.15 },
      outlet: { p: 12e5, T: 293.15 + dT },
      massFlow: 50,
      shaftPower: 62.5e3,
    });
    expect(r.head).toBeCloseTo(1e6 / (1000 * STANDARD_GRAVITY), 9);
    expect(r.head).toBeCloseTo(101.97, 2);
    expect(r.hydraulicPower).toBeCloseTo(50e3, 6); // m dp / rho
    expect(r.hydraulicEfficiency).toBeCloseTo(0.8, 12);
    // eta = v dp / (c dT + v dp) for the incompressible model (ISO 5198 thermodynamic method).
    const expected = 1000 / (4186 * dT + 1000);
    expect(r.thermodynamicEfficiency).toBeCloseTo(expected, 12);
    expect(r.isentropicEfficiency).toBe(r.thermodynamicEfficiency);
    expect(r.valid).toBe(true);
  });

  it('a motor: shaft = electrical x eta', () => {
    const water = incompressibleLiquid(1000, 4186);
    const r = evaluatePump({
      kind: 'pump',
      fluid: water,
      inlet: { p: 2e5, T: 293.15 },
      outlet: { p: 12e5, T: 293.3 },
      massFlow: 50,
      electricalPower: 70e3,
      driverEfficiency: 0.95,
    });
    expect(r.shaftPowerUsed).toBeCloseTo(66.5e3, 6);
  });

  it('a pump outlet colder than its inlet is an instrument fault', () => {
    const water = incompressibleLiquid(1000, 4186);
    const r = evaluatePump({
      kind: 'pump',
      fluid: water,
      inlet: { p: 2e5, T: 293.15 },
      outlet: { p: 12e5, T: 293.1 },
    });
    expect(r.flags).toContain('second-law-violation');
    expect(r.valid).toBe(false);
  });
});

describe('fan', () => {
  it('ISO 5801 k_p tends to 1 for small pressure ratios and is below 1 otherwise', () => {
    // k_p -> 1 as x and z -> 0 (incompressible limit of the ISO 5801 formula): 1 Pa at 80 %.
    expect(compressibilityCoefficient(1, 101325, 1 / 0.8, 1, 1.4)).toBeCloseTo(1, 5);
    expect(compressibilityCoefficient(5000, 101325, 80e3, 10, 1.4)).toBeLessThan(1);
  });

  it('an isentropic fan on a perfect gas: air power = shaft power (ISO 5801 k_p is exact there)', () => {
    // With eta = 1, z = (1+x)^((k-1)/k) - 1 and q p1 x k_p = P_r: an exact identity of the formula.
    const p1 = 101325;
    const p2 = p1 + 5000;
    const T1 = 293.15;
    const T2s = T1 * (p2 / p1) ** ((k - 1) / k);
    const m = 12;
    const shaft = m * cp * (T2s - T1);
    const r = evaluateMachine({
      kind: 'fan',
      fluid: air,
      inlet: { p: p1, T: T1 },
      outlet: { p: p2, T: T2s },
      massFlow: m,
      shaftPower: shaft,
    });
    expect(r.fanEfficiency).toBeCloseTo(1, 9);
    expect(r.isentropicEfficiency).toBeCloseTo(1, 9);
    expect(r.fanPressureRise).toBe(5000);
  });

  it('a 10 m3/s fan at 2.5 kPa and 75 % efficiency: air power near q dp (common practice, no source)', () => {
    const p1 = 101325;
    const dp = 2500;
    const T1 = 293.15;
    const m = (10 * p1) / (R * T1);
    const shaft = (10 * dp) / 0.75;
    const r = evaluateMachine({
      kind: 'fan',
      fluid: air,
      inlet: { p: p1, T: T1 },
      outlet: { p: p1 + dp, T: T1 + 3.3 },
      massFlow: m,
      shaftPower: shaft,
    });
    expect(r.compressibilityCoefficient!).toBeGreaterThan(0.98);
    expect(r.compressibilityCoefficient!).toBeLessThan(1);
    expect(r.airPower! / (10 * dp)).toBeCloseTo(r.compressibilityCoefficient!, 9);
    expect(r.fanEfficiency).toBeCloseTo(0.75 * r.compressibilityCoefficient!, 9);
  });
});
