import { describe, expect, it } from 'vitest';
import { BadInputError, OutOfRangeError } from '../errors.js';
import { mulberry32 } from '../uncertainty/monte-carlo.js';
import {
  enthalpyPS,
  enthalpyPT,
  entropyPT,
  saturatedLiquid,
  saturatedVapour,
  saturationPressure,
  saturationTemperature,
  temperaturePH,
  temperaturePS,
  water,
  waterHS,
  waterPH,
  waterPS,
  waterPT,
} from './index.js';

/** Random valid (p [Pa], T [K]) over the whole formulation, log-uniform in p. */
function randomStates(n: number, seed: number): [number, number][] {
  const r = mulberry32(seed); // fixed seed: every run checks the same states
  const out: [number, number][] = [];
  while (out.length < n) {
    const T = 273.16 + r() * (2273.15 - 273.16);
    const p = Math.exp(Math.log(1e3) + r() * (Math.log(100e6) - Math.log(1e3)));
    if (T > 1073.15 && p > 50e6) continue;
    // Stay clear of the saturation line, where (p,T) is ambiguous.
    if (T < 647.096 && p > 611.213 && Math.abs(T - saturationTemperature(Math.min(p, 22.064e6))) < 0.05)
      continue;
    out.push([p, T]);
  }
  return out;
}

describe('IAPWS-IF97 thermodynamic consistency', () => {
  it('dh/ds at constant p equals T (Gibbs relation dh = T ds + v dp) to 1e-5', () => {
    // Source: the Gibbs relation dh = T ds + v dp (any thermodynamics text); central differences in T.
    for (const [p, T] of randomStates(300, 1)) {
      const dT = 1e-3 * (T > 1073.15 ? 1 : Math.min(1, Math.abs(T - 1073.15) / 2 + 1e-3));
      const h1 = enthalpyPT(p, T - dT);
      const h2 = enthalpyPT(p, T + dT);
      const s1 = entropyPT(p, T - dT);
      const s2 = entropyPT(p, T + dT);
      const slope = (h2 - h1) / (s2 - s1);
      expect(Math.abs(slope - T) / T, `p=${p} T=${T}`).toBeLessThanOrEqual(1e-5);
    }
  });

  it('u = h - p v in every region', () => {
    // Source: definition of enthalpy, h = u + p v.
    for (const [p, T] of randomStates(200, 2)) {
      const st = waterPT(p, T);
      expect(Math.abs(st.u - (st.h - p * st.v)) / Math.max(Math.abs(st.h), 1e5)).toBeLessThanOrEqual(1e-12);
    }
  });

  it('inside the dome isobars are straight lines in h-s with slope Tsat', () => {
    // Source: dh = T ds at constant p and T in the two-phase region (DESIGN.md section 5).
    for (const p of [1e3, 5e3, 1e5, 1e6, 10e6, 16e6, 18e6, 21e6, 22e6]) {
      const liq = saturatedLiquid(p);
      const vap = saturatedVapour(p);
      const slope = (vap.h - liq.h) / (vap.s - liq.s);
      expect(Math.abs(slope - liq.T) / liq.T, `p=${p}`).toBeLessThanOrEqual(1e-5);
      for (const x of [0.1, 0.37, 0.5, 0.93]) {
        const h = liq.h + x * (vap.h - liq.h);
        const st = waterPH(p, h);
        expect(st.region).toBe(4);
        expect(Math.abs(st.x! - x)).toBeLessThanOrEqual(1e-12);
        // On the straight line through the two ends.
        expect(Math.abs(st.h - (liq.h + slope * (st.s - liq.s))) / st.h).toBeLessThanOrEqual(1e-12);
        expect(st.cp).toBeUndefined();
        expect(st.w).toBeUndefined();
        expect(st.T).toBe(saturationTemperature(p));
      }
    }
  });

  it('round trips (p,T) -> h -> T and (p,T) -> s -> T to 1e-9', () => {
    // Source: common practice, no source (inverse consistency of the backward solution).
    for (const [p, T] of randomStates(400, 3)) {
      const h = enthalpyPT(p, T);
      const s = entropyPT(p, T);
      expect(Math.abs(temperaturePH(p, h) - T) / T, `p=${p} T=${T} via h`).toBeLessThanOrEqual(1e-9);
      expect(Math.abs(temperaturePS(p, s) - T) / T, `p=${p} T=${T} via s`).toBeLessThanOrEqual(1e-9);
      expect(Math.abs(enthalpyPS(p, s) - h) / Math.max(Math.abs(h), 1e5)).toBeLessThanOrEqual(1e-9);
    }
  });

  it('(h,s) gives back p and T of superheated, liquid and region-3 states to 1e-9', () => {
    // Source: common practice, no source (inverse consistency).
    for (const [p, T] of randomStates(80, 4)) {
      const st = waterPT(p, T);
      const back = waterHS(st.h, st.s);
      expect(Math.abs(back.p - p) / p, `p=${p} T=${T}`).toBeLessThanOrEqual(1e-7);
      expect(Math.abs(back.T - T) / T, `p=${p} T=${T}`).toBeLessThanOrEqual(1e-9);
    }
  });

  it('(h,s) finds wet expansion exits: p, T and x', () => {
    // Source: common practice, no source (inverse consistency of the wet mixture).
    for (const [p, x] of [
      [5e3, 0.88],
      [10e3, 0.95],
      [0.1e6, 0.5],
      [2e6, 0.02],
      [18e6, 0.6],
    ] as const) {
      const liq = saturatedLiquid(p);
      const vap = saturatedVapour(p);
      const h = liq.h + x * (vap.h - liq.h);
      const s = liq.s + x * (vap.s - liq.s);
      const st = waterHS(h, s);
      expect(st.region).toBe(4);
      expect(Math.abs(st.p - p) / p).toBeLessThanOrEqual(1e-8);
      expect(Math.abs(st.x! - x)).toBeLessThanOrEqual(1e-8);
    }
  });

  it('the turbine case: h(p_out, s_in) below h of the real exit, and the Fluid adapter agrees', () => {
    // Source: IAPWS R7-97(2012) forward equations; second law (s_out >= s_in) for the real exit.
    const inlet = water.statePT(10e6, 803.15);
    const hs = enthalpyPS(10e3, inlet.s);
    const isentropic = water.statePS(10e3, inlet.s);
    expect(isentropic.h).toBeCloseTo(hs, 6);
    expect(isentropic.x).toBeGreaterThan(0.7);
    expect(isentropic.x).toBeLessThan(0.9);
    expect(water.saturationTemperature!(10e3)).toBe(saturationTemperature(10e3));
    expect(water.kind).toBe('water');
  });
});

describe('IAPWS-IF97 out-of-range input', () => {
  function catchError(fn: () => unknown): unknown {
    try {
      fn();
    } catch (e) {
      return e;
    }
    throw new Error('expected an error');
  }

  it('temperature below 273.15 K and above 2273.15 K', () => {
    // Source: IAPWS R7-97(2012) Section 4 (range of validity).
    for (const T of [273.14, 2273.2]) {
      const e = catchError(() => waterPT(1e5, T));
      expect(e).toBeInstanceOf(OutOfRangeError);
      const o = e as OutOfRangeError;
      expect(o.code).toBe('THERMO_OUT_OF_RANGE');
      expect(o.quantity).toBe('temperature T');
      expect(o.value).toBe(T);
      expect(o.min).toBe(273.15);
      expect(o.max).toBe(2273.15);
      expect(o.unit).toBe('K');
    }
  });

  it('pressure above 100 MPa, not positive, and above 50 MPa in region 5', () => {
    // Source: IAPWS R7-97(2012) Section 4 (range of validity).
    for (const p of [100.1e6, 0, -5]) {
      const o = catchError(() => waterPT(p, 500)) as OutOfRangeError;
      expect(o).toBeInstanceOf(OutOfRangeError);
      expect(o.quantity).toBe('pressure p');
      expect(o.value).toBe(p);
      expect(o.max).toBe(100e6);
    }
    const o = catchError(() => waterPT(60e6, 1500)) as OutOfRangeError;
    expect(o).toBeInstanceOf(OutOfRangeError);
    expect(o.value).toBe(60e6);
    expect(o.max).toBe(50e6);
    expect(o.formulation).toContain('region 5');
    // Between 1073.15 K and 2273.15 K below 50 MPa is fine.
    expect(waterPT(50e6, 1500).region).toBe(5);
  });

  it('NaN and Infinity are BadInputError naming the input', () => {
    // Source: common practice, no source.
    const cases: [() => unknown, string][] = [
      [() => waterPT(Number.NaN, 300), 'pressure p'],
      [() => waterPT(1e5, Number.POSITIVE_INFINITY), 'temperature T'],
      [() => waterPH(1e5, Number.NaN), 'specific enthalpy h'],
      [() => waterPS(1e5, Number.NEGATIVE_INFINITY), 'specific entropy s'],
      [() => waterHS(Number.NaN, 6000), 'specific enthalpy h'],
      [() => enthalpyPT(Number.NaN, 300), 'pressure p'],
      [() => saturationPressure(Number.NaN), 'temperature T'],
    ];
    for (const [fn, field] of cases) {
      const e = catchError(fn) as BadInputError;
      expect(e).toBeInstanceOf(BadInputError);
      expect(e.code).toBe('THERMO_BAD_INPUT');
      expect(e.field).toBe(field);
    }
  });

  it('(p,h) and (p,s) outside what 273.15 K..2273.15 K give at that p', () => {
    // Source: IAPWS R7-97(2012) Section 4; limits are h and s of the end states at that pressure.
    const low = catchError(() => waterPH(1e6, -1e5)) as OutOfRangeError;
    expect(low).toBeInstanceOf(OutOfRangeError);
    expect(low.quantity).toBe('specific enthalpy h');
    expect(low.value).toBe(-1e5);
    expect(low.min).toBeCloseTo(enthalpyPT(1e6, 273.15), 6);
    expect(low.max).toBeCloseTo(enthalpyPT(1e6, 2273.15), 6);
    const high = catchError(() => waterPS(1e6, 20e3)) as OutOfRangeError;
    expect(high).toBeInstanceOf(OutOfRangeError);
    expect(high.quantity).toBe('specific entropy s');
    expect(high.max).toBeCloseTo(entropyPT(1e6, 2273.15), 6);
    // Above 50 MPa region 5 is closed: the top is region 2 at 1073.15 K.
    const r5 = catchError(() => waterPH(80e6, 5e6)) as OutOfRangeError;
    expect(r5).toBeInstanceOf(OutOfRangeError);
    expect(r5.max).toBeCloseTo(enthalpyPT(80e6, 1073.15), 6);
  });

  it('saturation functions outside the saturation line', () => {
    // Source: IAPWS R7-97(2012) Section 8.1: 273.15 K..647.096 K, 611.213 Pa..22.064 MPa.
    const t = catchError(() => saturationPressure(650)) as OutOfRangeError;
    expect(t).toBeInstanceOf(OutOfRangeError);
    expect(t.max).toBe(647.096);
    const p = catchError(() => saturationTemperature(23e6)) as OutOfRangeError;
    expect(p).toBeInstanceOf(OutOfRangeError);
    expect(p.max).toBe(22.064e6);
    expect(p.min).toBeCloseTo(611.2127, 3);
    expect(() => saturatedLiquid(500)).toThrow(OutOfRangeError);
  });
});
