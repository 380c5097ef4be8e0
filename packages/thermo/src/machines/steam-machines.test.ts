import { describe, expect, it } from 'vitest';
import { hsChart } from '../chart/index.js';
import gasCases from '../gas/fixtures/gas-cases.json' with { type: 'json' };
import { dryAir, idealGasMixture, naturalGas } from '../gas/index.js';
import steamCases from '../steam/fixtures/machine-cases.json' with { type: 'json' };
import { saturatedLiquid, saturatedVapour, saturationTemperature, water } from '../steam/index.js';
import { evaluateMachineWithUncertainty, machineMonteCarlo } from '../uncertainty/index.js';
import { evaluateMachine, polytropicEfficiencyIdealGas } from './index.js';
import type { MachineInput } from './types.js';

const C = 273.15;
const rel = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);
/** Saturated states from python3-iapws at 10, 50 and 75 kPa (steam/fixtures/machine-cases.json). */
const sat = (p: number) => steamCases.saturation.find((s) => s.p === p)!;

describe('steam turbine on IAPWS-IF97', () => {
  // Inputs after a common textbook example: 3 MPa, 400 degC to 50 kPa, 100 degC, 2 MW. The expected
  // states are IAPWS-IF97 via python3-iapws 1.5.x (steam/fixtures/machine-cases.json, made by
  // scripts/make-iapws-fixture.py), not the digits a textbook prints.
  const ref = steamCases.turbine;
  it('3 MPa, 400 degC to 50 kPa, 100 degC, 2 MW: states, efficiency and power as python3-iapws gives them', () => {
    const wRef = ref.inlet.h - ref.outlet.h;
    const r = evaluateMachine({
      kind: 'turbine',
      fluid: water,
      inlet: { p: ref.inlet.p, T: ref.inlet.T },
      outlet: { p: ref.outlet.p, T: ref.outlet.T },
      massFlow: 2e6 / wRef,
    });
    // IAPWS-IF97 region 2 and the wet ideal outlet, python3-iapws (machine-cases.json).
    expect(rel(r.inlet.h, ref.inlet.h)).toBeLessThan(1e-9);
    expect(rel(r.inlet.s, ref.inlet.s)).toBeLessThan(1e-9);
    expect(rel(r.outlet.h, ref.outlet.h)).toBeLessThan(1e-9);
    expect(rel(r.outletIsentropic.h, ref.outletIsentropic.h)).toBeLessThan(1e-9);
    expect(r.outletIsentropic.x).toBeCloseTo(ref.outletIsentropic.x, 9); // the ideal outlet is inside the dome
    // eta_T = (h1 - h2)/(h1 - h2s) (DESIGN.md section 5) on the reference states.
    const etaRef = wRef / (ref.inlet.h - ref.outletIsentropic.h);
    expect(r.isentropicEfficiency).toBeCloseTo(etaRef, 9);
    expect(r.power! / 1e6).toBeCloseTo(2, 6); // m w = 2 MW by construction of the mass flow
    expect(r.flags).toEqual([]);
    expect(r.valid).toBe(true);
  });

  it('wet exhaust: h_out = h_in - P/m and the quality from the IF97 saturation line', () => {
    const p2 = 10e3;
    const m = 10;
    const P = 8e6;
    const r = evaluateMachine({
      kind: 'turbine',
      fluid: water,
      inlet: { p: 3e6, T: 400 + C },
      outlet: { p: p2, T: saturationTemperature(p2) }, // a thermometer in wet steam reads saturation
      massFlow: m,
      shaftPower: P,
    });
    expect(r.flags).toContain('wet-outlet-energy-balance');
    expect(r.outlet.h).toBeCloseTo(r.inlet.h - P / m, 6); // steady-flow energy balance, adiabatic casing
    const hf = saturatedLiquid(p2).h;
    const hg = saturatedVapour(p2).h;
    expect(r.outlet.x).toBeCloseTo((r.inlet.h - P / m - hf) / (hg - hf), 9); // lever rule
    // Lever rule on the saturated states at 10 kPa from python3-iapws (machine-cases.json).
    const s10 = sat(10e3);
    expect(r.outlet.x).toBeCloseTo((r.inlet.h - P / m - s10.hf) / (s10.hg - s10.hf), 6);
    expect(r.isentropicEfficiency).toBeCloseTo(P / m / (r.inlet.h - r.outletIsentropic.h), 12);
    expect(r.entropyGeneration!).toBeGreaterThan(0);
    expect(r.valid).toBe(true);
  });

  it('wet exhaust without shaft power: undetermined, no efficiency', () => {
    const r = evaluateMachine({
      kind: 'turbine',
      fluid: water,
      inlet: { p: 3e6, T: 400 + C },
      outlet: { p: 10e3, T: saturationTemperature(10e3) + 1.5 }, // inside the 2 K margin
      massFlow: 10,
    });
    expect(r.flags).toEqual(['outlet-undetermined']);
    expect(r.isentropicEfficiency).toBeUndefined();
    expect(r.specificWork).toBeUndefined();
    expect(r.power).toBeUndefined();
    expect(r.valid).toBe(false);
  });

  it('GUM near the wet margin: perturbed points keep the energy-balance method (no jump)', () => {
    const p2 = 10e3;
    const input: MachineInput = {
      kind: 'turbine',
      fluid: water,
      inlet: { p: 3e6, T: 400 + C },
      outlet: { p: p2, T: saturationTemperature(p2) + 1.5 }, // inside the 2 K margin; +1 K would leave it
      massFlow: 10,
      shaftPower: 8e6,
    };
    const r = evaluateMachineWithUncertainty(input, {
      'outlet.T': { kind: 'absolute', value: 1 },
      shaftPower: { kind: 'reading', percent: 0.5 },
      massFlow: { kind: 'reading', percent: 1 },
    });
    expect(r.result.flags).toContain('wet-outlet-energy-balance');
    // Only power and flow matter on this branch: u(w)/w = sqrt(0.5^2 + 1^2) % (GUM 5.1.6).
    expect(r.uncertainty.specificWork! / r.result.specificWork!).toBeCloseTo(Math.hypot(0.005, 0.01), 4);
    expect(r.uncertainty.isentropicEfficiency!).toBeLessThan(0.02);
  });

  it('a supercritical inlet (above 22.064 MPa) is single phase: no saturation check', () => {
    const r = evaluateMachine({
      kind: 'turbine',
      fluid: water,
      inlet: { p: 25e6, T: 600 + C },
      outlet: { p: 5e6, T: 370 + C },
    });
    expect(r.flags).toEqual([]);
    expect(r.isentropicEfficiency!).toBeGreaterThan(0.5);
    expect(r.isentropicEfficiency!).toBeLessThan(1);
  });

  it('a turbine inlet below saturation is undetermined', () => {
    const r = evaluateMachine({
      kind: 'turbine',
      fluid: water,
      inlet: { p: 3e6, T: saturationTemperature(3e6) - 5 },
      outlet: { p: 10e3, T: 320 },
    });
    expect(r.flags).toContain('inlet-undetermined');
    expect(r.isentropicEfficiency).toBeUndefined();
  });

  it('GUM and Monte Carlo agree within 10 % on a steam turbine', () => {
    const input: MachineInput = {
      kind: 'turbine',
      fluid: water,
      inlet: { p: 10e6, T: 500 + C },
      outlet: { p: 1e6, T: 250 + C },
      massFlow: 50,
    };
    const u = {
      'inlet.p': { kind: 'reading', percent: 0.25 },
      'inlet.T': { kind: 'absolute', value: 1 },
      'outlet.p': { kind: 'reading', percent: 0.25 },
      'outlet.T': { kind: 'absolute', value: 1 },
      massFlow: { kind: 'reading', percent: 1 },
    } as const;
    const gum = evaluateMachineWithUncertainty(input, u);
    const mc = machineMonteCarlo(input, u, { trials: 4000, seed: 11 });
    for (const key of ['isentropicEfficiency', 'specificWork', 'power', 'entropyGeneration'] as const) {
      // JCGM 101:2008 section 8 (validation of the GUM framework by MC); 10 % is the project's acceptance.
      expect(Math.abs(gum.uncertainty[key]! / mc[key]!.uncertainty - 1)).toBeLessThan(0.1);
    }
    expect(gum.result.isentropicEfficiency).toBeCloseTo(mc.isentropicEfficiency!.mean, 3);
  });

  it('h-s chart: the IF97 dome, isobars with slope T, straight inside the dome', () => {
    const r = evaluateMachine({
      kind: 'turbine',
      fluid: water,
      inlet: { p: 3e6, T: 400 + C },
      outlet: { p: 10e3, T: saturationTemperature(10e3) },
      massFlow: 10,
      shaftPower: 8e6,
    });
    const chart = hsChart(r, water);
    expect(chart.dome).toBeDefined();
    const dome = chart.dome!;
    expect(dome.liquid.length).toBe(dome.vapour.length);
    // Vapour line to the right of the liquid line at every pressure (s_g > s_f below the critical point).
    for (let i = 0; i < dome.liquid.length; i++) expect(dome.vapour[i]!.s).toBeGreaterThan(dome.liquid[i]!.s);
    const tsat = saturationTemperature(10e3);
    const domeSlopes: number[] = [];
    for (const isobar of [chart.inletIsobar, chart.outletIsobar]) {
      expect(isobar.points.length).toBeGreaterThan(10);
      for (let i = 1; i < isobar.points.length; i++) {
        const a = isobar.points[i - 1]!;
        const b = isobar.points[i]!;
        const slope = (b.h - a.h) / (b.s - a.s);
        // dh = T ds at constant p (Gibbs relation); the secant slope lies between the ends' T. 1e-5
        // leaves room for IF97's small inconsistency where region 4 meets region 2 (R7-97(2012) sec. 5).
        expect(slope).toBeGreaterThanOrEqual(Math.min(a.T, b.T) * (1 - 1e-5));
        expect(slope).toBeLessThanOrEqual(Math.max(a.T, b.T) * (1 + 1e-5));
        if (a.T === tsat && b.T === tsat) {
          // Straight in the dome with slope h_fg/s_fg = T_sat (Clapeyron); IF97's regions 1 and 2 meet the
          // saturation line with Gibbs energies equal only to about 1e-6, hence the tolerance.
          expect(Math.abs(slope / tsat - 1)).toBeLessThan(1e-5);
          domeSlopes.push(slope);
        }
      }
    }
    expect(domeSlopes.length).toBeGreaterThan(10);
    // One straight line: every in-dome secant has the same slope (lever rule, h and s linear in x).
    expect(Math.max(...domeSlopes) / Math.min(...domeSlopes) - 1).toBeLessThan(1e-9);
    expect(chart.actualPath.at(-1)!.h).toBeCloseTo(r.outlet.h, 0);
    expect(chart.outlet!.h).toBe(r.outlet.h);
  });
});

describe('water pump on IAPWS-IF97', () => {
  // Inputs after a common textbook Rankine cycle: liquid at 75 kPa, 0.05 K below saturation so that p
  // and T fix it, pumped to 3 MPa. Expected figures: IAPWS-IF97 via python3-iapws (machine-cases.json).
  it('75 kPa liquid to 3 MPa: w_s = h(3 MPa, s1) - h1 as python3-iapws gives it', () => {
    const ref = steamCases.pump;
    const T1 = ref.inlet.T;
    const r = evaluateMachine({
      kind: 'pump',
      fluid: water,
      inlet: { p: ref.inlet.p, T: T1 },
      outlet: { p: ref.outletIsentropic.p, T: T1 + 0.2 },
    });
    const wsRef = ref.outletIsentropic.h - ref.inlet.h; // 3.03 kJ/kg
    expect(rel(r.isentropicSpecificWork, wsRef)).toBeLessThan(1e-7);
    expect(rel(r.inlet.v, ref.inlet.v)).toBeLessThan(1e-7);
    // A liquid is nearly incompressible: w_s = integral v dp is within 0.2 % of v1 dp (common practice, no source).
    expect(r.isentropicSpecificWork / (r.inlet.v * (3e6 - 75e3)) - 1).toBeLessThan(2e-3);
    expect(r.head).toBeCloseTo(((3e6 - 75e3) * r.inlet.v) / 9.80665, 9);
    expect(r.thermodynamicEfficiency!).toBeGreaterThan(0);
    expect(r.thermodynamicEfficiency!).toBeLessThan(1);
  });
});

describe('water pump inlet checks', () => {
  it('a pump inlet at or above saturation is undetermined (steam at the suction is no pump state)', () => {
    const T = saturationTemperature(2e5) + 0.1;
    const r = evaluateMachine({
      kind: 'pump',
      fluid: water,
      inlet: { p: 2e5, T },
      outlet: { p: 20e5, T: T + 0.5 },
    });
    expect(r.flags).toEqual(['inlet-undetermined']);
    expect(r.isentropicEfficiency).toBeUndefined();
    expect(r.valid).toBe(false);
  });
});

describe('gas compressors on the gas models', () => {
  // Inputs after a common textbook example: air from 100 kPa, 285 K to 800 kPa, 569.5 K, 0.2 kg/s.
  // Expected figures: ideal-gas air of Lemmon et al. (2000) (its ideal-gas part, via python3-iapws;
  // gas/fixtures/gas-cases.json, made by scripts/make-air-fixture.py). Our dry air is a NASA-polynomial
  // mixture with 400 ppm CO2, so it is held to the 0.3 % that gas/mixture.test.ts accepts for h and s.
  // Measured 2026-12: w_s 41 J/kg (0.02 %) low, eta_s 0.0005 low, power 0.05 % high.
  it('air compressor 100 kPa, 285 K to 800 kPa, 569.5 K on dry air (NASA polynomials) against ideal-gas Lemmon air', () => {
    const ref = gasCases.compressorIdealGas;
    const r = evaluateMachine({
      kind: 'compressor',
      fluid: dryAir(),
      inlet: { p: ref.p1, T: ref.T1 },
      outlet: { p: ref.p2, T: ref.T2 },
      massFlow: ref.massFlow,
    });
    expect(rel(r.isentropicSpecificWork, ref.isentropicSpecificWork)).toBeLessThan(0.003);
    expect(Math.abs(r.isentropicEfficiency! - ref.isentropicEfficiency)).toBeLessThan(0.003);
    expect(rel(r.power!, ref.power)).toBeLessThan(0.003);
    expect(r.valid).toBe(true);
  });

  it('Schultz and the logarithmic form agree for an ideal gas with near-constant cp (common practice, no source)', () => {
    // Nitrogen 1 -> 2 bar from 300 K: cp varies by < 0.3 %, so the forms agree to about 1e-3.
    const n2 = idealGasMixture({ N2: 1 });
    const r = evaluateMachine({
      kind: 'compressor',
      fluid: n2,
      inlet: { p: 1e5, T: 300 },
      outlet: { p: 2e5, T: 380 },
    });
    const cpMean = (r.outlet.h - r.inlet.h) / (380 - 300);
    const k = cpMean / (cpMean - n2.R);
    expect(
      Math.abs(r.polytropicEfficiency! - polytropicEfficiencyIdealGas(1e5, 300, 2e5, 380, k)),
    ).toBeLessThan(2e-3);
    expect(r.schultzFactor).toBeCloseTo(1, 2);
  });

  it('natural gas on Peng-Robinson: a real-gas compression with a Schultz factor near 1', () => {
    const gas = naturalGas({ CH4: 0.9, C2H6: 0.06, C3H8: 0.02, N2: 0.01, CO2: 0.01 }, 'peng-robinson');
    const r = evaluateMachine({
      kind: 'compressor',
      fluid: gas,
      inlet: { p: 40e5, T: 293.15 },
      outlet: { p: 70e5, T: 340 },
      massFlow: 30,
    });
    expect(r.isentropicEfficiency!).toBeGreaterThan(0.6);
    expect(r.isentropicEfficiency!).toBeLessThan(1);
    // ASME PTC 10: f departs little from 1 for moderate pressure ratios (common practice, no source).
    expect(Math.abs(r.schultzFactor! - 1)).toBeLessThan(0.02);
    expect(r.polytropicEfficiency!).toBeGreaterThan(r.isentropicEfficiency!);
    expect(r.valid).toBe(true);
  });

  it('GUM and Monte Carlo agree within 10 % on the Peng-Robinson compressor', () => {
    const gas = naturalGas({ CH4: 0.9, C2H6: 0.06, C3H8: 0.02, N2: 0.01, CO2: 0.01 }, 'peng-robinson');
    const input: MachineInput = {
      kind: 'compressor',
      fluid: gas,
      inlet: { p: 40e5, T: 293.15 },
      outlet: { p: 70e5, T: 340 },
      massFlow: 30,
    };
    const u = {
      'inlet.p': { kind: 'reading', percent: 0.25 },
      'inlet.T': { kind: 'absolute', value: 0.5 },
      'outlet.p': { kind: 'reading', percent: 0.25 },
      'outlet.T': { kind: 'absolute', value: 0.5 },
      massFlow: { kind: 'reading', percent: 1 },
    } as const;
    const gum = evaluateMachineWithUncertainty(input, u);
    const mc = machineMonteCarlo(input, u, { trials: 4000, seed: 5 });
    for (const key of ['isentropicEfficiency', 'polytropicEfficiency', 'polytropicHead', 'power'] as const) {
      // JCGM 101:2008 section 8; 10 % is the project's acceptance.
      expect(Math.abs(gum.uncertainty[key]! / mc[key]!.uncertainty - 1)).toBeLessThan(0.1);
    }
  });
});

describe('fan on dry air (ISO 5801)', () => {
  it('k_p matches its first-order series 1 - x/2 + z/2 for a 3 kPa fan (expansion of the ISO 5801 formula)', () => {
    const air = dryAir();
    const p1 = 101325;
    const pF = 3000;
    const q = 20; // m3/s at the inlet
    const shaft = (q * pF) / 0.8;
    const r = evaluateMachine({
      kind: 'fan',
      fluid: air,
      inlet: { p: p1, T: 293.15 },
      outlet: { p: p1 + pF, T: 293.15 + 3.7 },
      volumeFlow: q,
      shaftPower: shaft,
    });
    const kappa = 1.4; // dry air near 20 degC (cp/cv = 1.400, common practice)
    const x = pF / p1;
    const z = ((kappa - 1) / kappa) * (shaft / (q * p1));
    // ln(1+x)/x = 1 - x/2 + O(x^2) and z/ln(1+z) = 1 + z/2 + O(z^2).
    expect(Math.abs(r.compressibilityCoefficient! - (1 - x / 2 + z / 2))).toBeLessThan(2 * x * x);
    expect(r.airPower).toBeCloseTo(q * pF * r.compressibilityCoefficient!, 6);
    expect(r.massFlow! * r.inlet.v).toBeCloseTo(q, 9); // volume flow back through the inlet density
    expect(r.fanEfficiency!).toBeGreaterThan(0.78);
    expect(r.fanEfficiency!).toBeLessThan(0.8);
    expect(r.fanPressureRise).toBe(pF);
  });
});
