import { ConvergenceError, OutOfRangeError } from '../errors.js';
import type { Fluid, FluidState } from '../fluid.js';
import { IF97, P_CRIT, P_MAX, R, T_CRIT, T_MIN } from './constants.js';
import {
  checkFinite,
  checkPressure,
  checkPT,
  density3PT,
  enthalpyChecked,
  enthalpyEntropyChecked,
  enthalpyOfSolution,
  entropyChecked,
  gibbsFull,
  outRegion,
  outRho,
  outT,
  outX,
  regionPT,
  satRhoL,
  satRhoV,
  satT,
  saturation,
  solveP,
} from './core.js';
import { F3, helmholtz3 } from './region3.js';
import { P_SAT_623, P_SAT_MIN, psat, tsat } from './region4.js';
import { G } from './scratch.js';

/**
 * Water and steam by IAPWS-IF97 (IAPWS R7-97(2012)) with the supplementary releases SR3-03
 * (region 3 T(p,h), T(p,s)) and SR5-05 (region 3 v(p,T)). SI units throughout: Pa, K, J/kg,
 * J/(kg K), m3/kg, m/s.
 */

/** A state of water or steam. */
export interface WaterProperties extends FluidState {
  /** Specific internal energy [J/kg]. */
  readonly u: number;
  /** Isobaric specific heat capacity [J/(kg K)]; undefined inside the two-phase dome. */
  readonly cp: number | undefined;
  /** Isochoric specific heat capacity [J/(kg K)]; undefined inside the two-phase dome. */
  readonly cv: number | undefined;
  /** Speed of sound [m/s]; undefined inside the two-phase dome. */
  readonly w: number | undefined;
  /** IF97 region: 1 liquid, 2 vapour, 3 dense near-critical, 4 two-phase (and the saturation line), 5 high-temperature steam. */
  readonly region: 1 | 2 | 3 | 4 | 5;
}

/** Properties from the last gibbsFull (regions 1, 2, 5), R7-97(2012) Tables 3, 12 and 39. */
function fromGibbs(p: number, T: number, region: 1 | 2 | 5): WaterProperties {
  gibbsFull(region, p, T);
  const g = G[0]!;
  const gp = G[1]!;
  const gpp = G[2]!;
  const gt = G[3]!;
  const gtt = G[4]!;
  const gpt = G[5]!;
  const pi = G[6]!;
  const tau = G[7]!;
  const rt = R * T;
  const a = gp - tau * gpt;
  return {
    p,
    T,
    v: (rt * pi * gp) / p,
    h: rt * tau * gt,
    s: R * (tau * gt - g),
    u: rt * (tau * gt - pi * gp),
    cp: -R * tau * tau * gtt,
    cv: R * (-tau * tau * gtt + (a * a) / gpp),
    w: Math.sqrt((rt * gp * gp) / ((a * a) / (tau * tau * gtt) - gpp)),
    region,
    x: undefined,
  };
}

/** Properties of region 3 at density rho [kg/m3], T [K], R7-97(2012) Table 31; p [Pa] is the pressure reported. */
function fromHelmholtz(p: number, T: number, rho: number): WaterProperties {
  helmholtz3(rho, T);
  const f = F3[0]!;
  const fd = F3[1]!;
  const fdd = F3[2]!;
  const ft = F3[3]!;
  const ftt = F3[4]!;
  const fdt = F3[5]!;
  const d = F3[6]!;
  const t = F3[7]!;
  const rt = R * T;
  const a = d * fd - d * t * fdt;
  const b = 2 * d * fd + d * d * fdd;
  return {
    p,
    T,
    v: 1 / rho,
    h: rt * (t * ft + d * fd),
    s: R * (t * ft - f),
    u: rt * t * ft,
    cp: R * (-t * t * ftt + (a * a) / b),
    cv: -R * t * t * ftt,
    w: Math.sqrt(rt * (b - (a * a) / (t * t * ftt))),
    region: 3,
    x: undefined,
  };
}

/** Properties at a checked (p, T) outside the dome. */
function propertiesPT(p: number, T: number): WaterProperties {
  const region = regionPT(p, T);
  if (region === 3) return fromHelmholtz(p, T, density3PT(p, T));
  return fromGibbs(p, T, region);
}

/** Saturated liquid and vapour at a checked p [Pa] below the critical pressure. */
function saturatedPair(p: number): [WaterProperties, WaterProperties] {
  saturation(p);
  const T = satT;
  if (p <= P_SAT_623) return [fromGibbs(p, T, 1), fromGibbs(p, T, 2)];
  return [fromHelmholtz(p, T, satRhoL), fromHelmholtz(p, T, satRhoV)];
}

/** The wet mixture of quality x at p [Pa]: lever rule on v, h, s, u (R7-97(2012) Section 8). */
function mixture(p: number, x: number): WaterProperties {
  const [liq, vap] = saturatedPair(p);
  const mix = (a: number, b: number): number => a + x * (b - a);
  return {
    p,
    T: liq.T,
    v: mix(liq.v, vap.v),
    h: mix(liq.h, vap.h),
    s: mix(liq.s, vap.s),
    u: mix(liq.u, vap.u),
    cp: undefined,
    cv: undefined,
    w: undefined,
    region: 4,
    x,
  };
}

/** Turns the result of solveP into properties. */
function fromSolution(p: number): WaterProperties {
  const region = outRegion;
  if (region === 4) return mixture(p, outX);
  if (region === 3) return fromHelmholtz(p, outT, outRho);
  return fromGibbs(p, outT, region);
}

/** Properties of water or steam at pressure p [Pa] and temperature T [K] (single phase; IF97 regions 1, 2, 3, 5). */
export function waterPT(p: number, T: number): WaterProperties {
  checkPT(p, T);
  return propertiesPT(p, T);
}

/** Properties at pressure p [Pa] and specific enthalpy h [J/kg]; inside the dome gives quality x and the mixture. */
export function waterPH(p: number, h: number): WaterProperties {
  checkPressure(p);
  checkFinite('specific enthalpy h', h);
  solveP(0, p, h);
  return fromSolution(p);
}

/** Properties at pressure p [Pa] and specific entropy s [J/(kg K)]; inside the dome gives quality x and the mixture. */
export function waterPS(p: number, s: number): WaterProperties {
  checkPressure(p);
  checkFinite('specific entropy s', s);
  solveP(1, p, s);
  return fromSolution(p);
}

/** Saturation pressure [Pa] at T [K], R7-97(2012) Eq. (30); 273.15 K <= T <= 647.096 K. */
export function saturationPressure(T: number): number {
  checkFinite('temperature T', T);
  if (!(T >= T_MIN) || T > T_CRIT)
    throw new OutOfRangeError('temperature T', T, 'K', T_MIN, T_CRIT, `${IF97} saturation line`);
  return psat(T);
}

/** Saturation temperature [K] at p [Pa], R7-97(2012) Eq. (31); psat(273.15 K) = 611.213 Pa <= p <= 22.064 MPa. */
export function saturationTemperature(p: number): number {
  checkSaturationPressure(p);
  return tsat(p);
}

function checkSaturationPressure(p: number): void {
  checkFinite('pressure p', p);
  if (!(p >= P_SAT_MIN) || p > P_CRIT) {
    throw new OutOfRangeError('pressure p', p, 'Pa', P_SAT_MIN, P_CRIT, `${IF97} saturation line`);
  }
}

/** The critical point as region 3 at rho = 322 kg/m3, T = 647.096 K (R7-97(2012) Eqs. (2) to (4)); cp and w are not finite there. */
function criticalPoint(x: 0 | 1): WaterProperties {
  const c = fromHelmholtz(P_CRIT, T_CRIT, 322);
  return { ...c, cp: undefined, w: undefined, region: 4, x };
}

/**
 * Saturated liquid at p [Pa] (611.213 Pa..22.064 MPa): region 4 with x = 0; cp, cv and w are
 * those of the liquid side of the line.
 */
export function saturatedLiquid(p: number): WaterProperties {
  checkSaturationPressure(p);
  if (p === P_CRIT) return criticalPoint(0);
  return { ...saturatedPair(p)[0], region: 4, x: 0 };
}

/**
 * Saturated vapour at p [Pa] (611.213 Pa..22.064 MPa): region 4 with x = 1; cp, cv and w are
 * those of the vapour side of the line.
 */
export function saturatedVapour(p: number): WaterProperties {
  checkSaturationPressure(p);
  if (p === P_CRIT) return criticalPoint(1);
  return { ...saturatedPair(p)[1], region: 4, x: 1 };
}

/** Specific enthalpy [J/kg] at p [Pa], T [K]; no allocation. */
export function enthalpyPT(p: number, T: number): number {
  checkPT(p, T);
  return enthalpyChecked(p, T);
}

/**
 * Specific enthalpy [J/kg] into out[0] and specific entropy [J/(kg K)] into out[1] at p [Pa],
 * T [K] from one evaluation of the basic equation; no allocation (out has length >= 2).
 */
export function enthalpyEntropyPT(p: number, T: number, out: Float64Array): void {
  checkPT(p, T);
  enthalpyEntropyChecked(p, T, out);
}

/** Specific entropy [J/(kg K)] at p [Pa], T [K]; no allocation. */
export function entropyPT(p: number, T: number): number {
  checkPT(p, T);
  return entropyChecked(p, T);
}

/** Temperature [K] at p [Pa], h [J/kg] (the saturation temperature inside the dome); no allocation. */
export function temperaturePH(p: number, h: number): number {
  checkPressure(p);
  checkFinite('specific enthalpy h', h);
  solveP(0, p, h);
  return outT;
}

/** Temperature [K] at p [Pa], s [J/(kg K)] (the saturation temperature inside the dome); no allocation. */
export function temperaturePS(p: number, s: number): number {
  checkPressure(p);
  checkFinite('specific entropy s', s);
  solveP(1, p, s);
  return outT;
}

/** Specific enthalpy [J/kg] at p [Pa], s [J/(kg K)]: the isentropic end point of an expansion or compression; no allocation. */
export function enthalpyPS(p: number, s: number): number {
  checkPressure(p);
  checkFinite('specific entropy s', s);
  solveP(1, p, s);
  return enthalpyOfSolution(p);
}

/** Lowest pressure searched by waterHS [Pa]: far below any condenser, inside region 2. */
const P_HS_MIN = 10;
const HS_MAX_STEPS = 200;

/**
 * Properties at specific enthalpy h [J/kg] and specific entropy s [J/(kg K)], e.g. the exit of
 * an expansion whose h comes from an energy balance. Solves s(p, h) = s for p: at constant h,
 * ds/dp = -v/T < 0 (Gibbs relation dh = T ds + v dp), so the root is unique; Newton steps in
 * ln p with that exact slope, kept inside a shrinking bracket by bisection. Covers superheated,
 * wet and liquid states between 10 Pa and 100 MPa.
 */
export function waterHS(h: number, s: number): WaterProperties {
  checkFinite('specific enthalpy h', h);
  checkFinite('specific entropy s', s);
  let lo = Math.log(P_HS_MIN);
  let hi = Math.log(P_MAX);
  let lnp = Math.log(1e5);
  let best: WaterProperties | undefined;
  let residual = Number.POSITIVE_INFINITY;
  for (let k = 0; k < HS_MAX_STEPS; k++) {
    const p = Math.exp(lnp);
    let state: WaterProperties | undefined;
    try {
      state = waterPH(p, h);
    } catch (err) {
      if (!(err instanceof OutOfRangeError)) throw err;
      // h below the 273.15 K state: below the triple-point pressure there is no liquid, so p must
      // rise; above it the 273.15 K liquid enthalpy grows with p, so p must fall. h above the
      // hottest state: that enthalpy falls with p, so p must fall.
      if (h < err.min && p < P_SAT_MIN) lo = lnp;
      else hi = lnp;
    }
    if (state !== undefined) {
      residual = state.s - s;
      best = state;
      if (Math.abs(residual) <= 1e-12 * Math.max(Math.abs(s), 1)) return state;
      // s(p, h) falls as p rises.
      if (residual > 0) lo = lnp;
      else hi = lnp;
      // d s / d ln p at constant h = -p v / T.
      const next = lnp + (residual * state.T) / (p * state.v);
      lnp = next > lo && next < hi ? next : 0.5 * (lo + hi);
    } else {
      lnp = 0.5 * (lo + hi);
    }
    if (hi - lo < 1e-14) break;
  }
  if (best !== undefined && Math.abs(residual) <= 1e-9 * Math.max(Math.abs(s), 1)) return best;
  if (hi - lo < 1e-9 && (hi >= Math.log(P_MAX) - 1e-9 || lo <= Math.log(P_HS_MIN) + 1e-9)) {
    throw new OutOfRangeError(
      'specific entropy s',
      s,
      'J/(kg K)',
      Number.NEGATIVE_INFINITY,
      Number.POSITIVE_INFINITY,
      `${IF97} for h = ${h} J/kg between ${P_HS_MIN} Pa and ${P_MAX} Pa`,
    );
  }
  throw new ConvergenceError(`${IF97} p(h, s)`, HS_MAX_STEPS, residual);
}

/** The Fluid adapter used by the machine models (kind 'water', has saturationTemperature). */
export const water: Fluid = {
  name: 'water (IAPWS-IF97)',
  kind: 'water',
  statePT: waterPT,
  statePH: waterPH,
  statePS: waterPS,
  saturationTemperature,
};
