import { BadInputError, ConvergenceError, OutOfRangeError } from '../errors.js';
import { IF97, P_CRIT, P_MAX, P_MAX_5, R, T_13, T_MAX_2, T_MAX_5, T_MIN } from './constants.js';
import { backwardT1PH, backwardT1PS, gibbs1, gibbs1Tau } from './region1.js';
import { backwardT2PH, backwardT2PS, gibbs2, gibbs2Tau } from './region2.js';
import { density3, F3, helmholtz3 } from './region3.js';
import { backwardT3PH, backwardT3PS, backwardV3PT, backwardV3Saturated } from './region3-backward.js';
import { P_SAT_623, P_SAT_MIN, pB23, psat, tB23, tsat } from './region4.js';
import { gibbs5, gibbs5Tau } from './region5.js';
import { GT } from './scratch.js';

/**
 * The solver core behind the public functions: input checks, region selection
 * (R7-97(2012) Figure 1 and Section 4), the (p,h) and (p,s) solutions with the backward
 * equations as first guess and Newton refinement on the basic equations, and the saturation
 * states. Results of a call go into module-level variables (no allocation on the hot path).
 */

// ---------------------------------------------------------------------------------------
// Input checks.

/** Throws BadInputError when value is NaN or infinite. */
export function checkFinite(field: string, value: number): void {
  if (!Number.isFinite(value)) throw new BadInputError(field, `must be a finite number, got ${value}`);
}

/** Checks p [Pa] for the whole formulation: finite and 0 < p <= 100 MPa. */
export function checkPressure(p: number): void {
  checkFinite('pressure p', p);
  if (!(p > 0) || p > P_MAX) throw new OutOfRangeError('pressure p', p, 'Pa', 0, P_MAX, IF97);
}

/** Checks (p [Pa], T [K]) against the range of IF97 (Section 4): 273.15 K..2273.15 K, up to 50 MPa above 1073.15 K. */
export function checkPT(p: number, T: number): void {
  checkPressure(p);
  checkFinite('temperature T', T);
  if (!(T >= T_MIN) || T > T_MAX_5) throw new OutOfRangeError('temperature T', T, 'K', T_MIN, T_MAX_5, IF97);
  if (T > T_MAX_2 && p > P_MAX_5) {
    throw new OutOfRangeError('pressure p', p, 'Pa', 0, P_MAX_5, `${IF97} region 5 (T > ${T_MAX_2} K)`);
  }
}

/** Region (1, 2, 3 or 5) of a checked (p [Pa], T [K]), R7-97(2012) Figure 1. */
export function regionPT(p: number, T: number): 1 | 2 | 3 | 5 {
  if (T > T_MAX_2) return 5;
  if (T <= T_13) return p >= psat(T) ? 1 : 2;
  return p > pB23(T) ? 3 : 2;
}

// ---------------------------------------------------------------------------------------
// Temperature-derivative evaluation shared by the Gibbs regions.

/** Fills GT for region 1, 2 or 5 at p [Pa], T [K]. */
function gibbsTau(region: number, p: number, T: number): void {
  if (region === 1) gibbs1Tau(p, T);
  else if (region === 2) gibbs2Tau(p, T);
  else gibbs5Tau(p, T);
}

/** Fills G for region 1, 2 or 5 at p [Pa], T [K]. */
export function gibbsFull(region: number, p: number, T: number): void {
  if (region === 1) gibbs1(p, T);
  else if (region === 2) gibbs2(p, T);
  else gibbs5(p, T);
}

/** Specific enthalpy [J/kg] from the last gibbsTau: h = R T tau gamma_tau (R7-97(2012) Table 3). */
function hFromGT(T: number): number {
  return R * T * GT[3]! * GT[1]!;
}
/** Specific entropy [J/(kg K)] from the last gibbsTau: s = R (tau gamma_tau - gamma). */
function sFromGT(): number {
  return R * (GT[3]! * GT[1]! - GT[0]!);
}
/** Isobaric heat capacity [J/(kg K)] from the last gibbsTau: cp = -R tau^2 gamma_tautau. */
function cpFromGT(): number {
  const tau = GT[3]!;
  return -R * tau * tau * GT[2]!;
}

/** Specific enthalpy [J/kg] in Gibbs region 1, 2 or 5. */
export function hGibbs(region: number, p: number, T: number): number {
  gibbsTau(region, p, T);
  return hFromGT(T);
}
/** Specific entropy [J/(kg K)] in Gibbs region 1, 2 or 5. */
export function sGibbs(region: number, p: number, T: number): number {
  gibbsTau(region, p, T);
  return sFromGT();
}

// ---------------------------------------------------------------------------------------
// Region 3 at (p, T).

/** Density [kg/m3] in region 3 at (p [Pa], T [K]): SR5-05 backward v(p,T), then Newton on Eq. (28). F3 is left at it. */
export function density3PT(p: number, T: number): number {
  return density3(p, T, 1 / backwardV3PT(p, T));
}

/** Enthalpy [J/kg] of the region 3 state at density rho [kg/m3], T [K] from F3 (Table 31). */
function h3FromF3(T: number): number {
  return R * T * (F3[7]! * F3[3]! + F3[6]! * F3[1]!);
}
/** Entropy [J/(kg K)] of the region 3 state from F3 (Table 31). */
function s3FromF3(): number {
  return R * (F3[7]! * F3[3]! - F3[0]!);
}
/** Isobaric heat capacity [J/(kg K)] of the region 3 state from F3 (Table 31). */
function cp3FromF3(): number {
  const d = F3[6]!;
  const t = F3[7]!;
  const a = d * F3[1]! - d * t * F3[5]!;
  return R * (-t * t * F3[4]! + (a * a) / (2 * d * F3[1]! + d * d * F3[2]!));
}

// ---------------------------------------------------------------------------------------
// Fast scalar forward functions.

/** Specific enthalpy [J/kg] at a checked (p [Pa], T [K]). */
export function enthalpyChecked(p: number, T: number): number {
  const region = regionPT(p, T);
  if (region === 3) {
    density3PT(p, T);
    return h3FromF3(T);
  }
  gibbsTau(region, p, T);
  return hFromGT(T);
}

/** Specific enthalpy [J/kg] and entropy [J/(kg K)] at a checked (p [Pa], T [K]) into out[0], out[1]. */
export function enthalpyEntropyChecked(p: number, T: number, out: Float64Array): void {
  const region = regionPT(p, T);
  if (region === 3) {
    density3PT(p, T);
    out[0] = h3FromF3(T);
    out[1] = s3FromF3();
    return;
  }
  gibbsTau(region, p, T);
  out[0] = hFromGT(T);
  out[1] = sFromGT();
}

/** Specific entropy [J/(kg K)] at a checked (p [Pa], T [K]). */
export function entropyChecked(p: number, T: number): number {
  const region = regionPT(p, T);
  if (region === 3) {
    density3PT(p, T);
    return s3FromF3();
  }
  gibbsTau(region, p, T);
  return sFromGT();
}

// ---------------------------------------------------------------------------------------
// Saturation states (single-entry cache keyed by pressure).

let satP = Number.NaN;
/** Saturation temperature [K] of the cached pressure. */
export let satT = 0;
/** Saturated liquid and vapour enthalpy [J/kg] and entropy [J/(kg K)] of the cached pressure. */
export let satHL = 0;
export let satHV = 0;
export let satSL = 0;
export let satSV = 0;
/** Saturated densities [kg/m3], set only above P_SAT_623 (region 3 side of the dome). */
export let satRhoL = 0;
export let satRhoV = 0;

/**
 * Saturation state at p [Pa] (P_SAT_MIN <= p < P_CRIT): T from Eq. (31); liquid and vapour
 * from regions 1 and 2 below psat(623.15 K), else from region 3 at the SR5-05 saturated
 * subregion densities refined by Newton (R7-97(2012) Section 8.1 puts the saturated states
 * of region 3 at T = Tsat(p)).
 */
export function saturation(p: number): void {
  if (p === satP) return;
  const T = tsat(p);
  if (p <= P_SAT_623) {
    gibbs1Tau(p, T);
    satHL = hFromGT(T);
    satSL = sFromGT();
    gibbs2Tau(p, T);
    satHV = hFromGT(T);
    satSV = sFromGT();
  } else {
    satRhoL = density3(p, T, 1 / backwardV3Saturated(p, T, false));
    satHL = h3FromF3(T);
    satSL = s3FromF3();
    satRhoV = density3(p, T, 1 / backwardV3Saturated(p, T, true));
    satHV = h3FromF3(T);
    satSV = s3FromF3();
  }
  satT = T;
  satP = p;
}

// ---------------------------------------------------------------------------------------
// (p,h) and (p,s).

/** Result of the last solvePH / solvePS: region, temperature [K], quality, region-3 density [kg/m3]. */
export let outRegion: 1 | 2 | 3 | 4 | 5 = 1;
export let outT = 0;
export let outX = 0;
export let outRho = 0;

const NEWTON_MAX_STEPS = 60;
/** Which property is given: 0 enthalpy h [J/kg], 1 entropy s [J/(kg K)]. */
type Given = 0 | 1;

/**
 * Temperature [K] in Gibbs region 1, 2 or 5 at p [Pa] where h (given 0) or s (given 1) equals
 * target: Newton steps dT = (h - h_k)/cp or T (s - s_k)/cp on the basic equation from T0,
 * held inside [lo, hi] by bisection when a step leaves the bracket.
 */
function newtonGibbs(
  given: Given,
  region: number,
  p: number,
  target: number,
  T0: number,
  lo: number,
  hi: number,
): number {
  // Start inside the bracket (the backward equations may land a little outside it).
  let T = Number.isFinite(T0) ? Math.min(Math.max(T0, lo), hi) : 0.5 * (lo + hi);
  let residual = Number.POSITIVE_INFINITY;
  for (let k = 0; k < NEWTON_MAX_STEPS; k++) {
    gibbsTau(region, p, T);
    const value = given === 0 ? hFromGT(T) : sFromGT();
    residual = target - value;
    // h and s both rise with T at constant p (cp > 0), so the residual sign moves the bracket.
    if (residual > 0) lo = T;
    else hi = T;
    const slope = given === 0 ? cpFromGT() : cpFromGT() / T;
    let next = T + residual / slope;
    if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
    const step = next - T;
    T = next;
    if (Math.abs(step) <= 1e-12 * T) return T;
  }
  throw new ConvergenceError(
    `${IF97} region ${region} T(p, ${given === 0 ? 'h' : 's'})`,
    NEWTON_MAX_STEPS,
    residual,
  );
}

/** As newtonGibbs for region 3, with each T mapped to its density through density3PT. Sets outRho. */
function newtonRegion3(given: Given, p: number, target: number, T0: number, lo: number, hi: number): number {
  // Start inside the bracket (the backward equations may land a little outside it).
  let T = Number.isFinite(T0) ? Math.min(Math.max(T0, lo), hi) : 0.5 * (lo + hi);
  let residual = Number.POSITIVE_INFINITY;
  for (let k = 0; k < NEWTON_MAX_STEPS; k++) {
    outRho = density3PT(p, T);
    const value = given === 0 ? h3FromF3(T) : s3FromF3();
    residual = target - value;
    if (residual > 0) lo = T;
    else hi = T;
    const slope = given === 0 ? cp3FromF3() : cp3FromF3() / T;
    let next = T + residual / slope;
    if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
    const step = next - T;
    T = next;
    if (Math.abs(step) <= 1e-12 * T) {
      outRho = density3PT(p, T);
      return T;
    }
  }
  throw new ConvergenceError(`${IF97} region 3 T(p, ${given === 0 ? 'h' : 's'})`, NEWTON_MAX_STEPS, residual);
}

function valueGibbs(given: Given, region: number, p: number, T: number): number {
  gibbsTau(region, p, T);
  return given === 0 ? hFromGT(T) : sFromGT();
}

function backward(given: Given, region: 1 | 2 | 3, p: number, target: number): number {
  if (region === 1) return given === 0 ? backwardT1PH(p, target) : backwardT1PS(p, target);
  if (region === 2) return given === 0 ? backwardT2PH(p, target) : backwardT2PS(p, target);
  return given === 0 ? backwardT3PH(p, target) : backwardT3PS(p, target);
}

function rangeError(given: Given, value: number, min: number, max: number, p: number): OutOfRangeError {
  return new OutOfRangeError(
    given === 0 ? 'specific enthalpy h' : 'specific entropy s',
    value,
    given === 0 ? 'J/kg' : 'J/(kg K)',
    min,
    max,
    `${IF97} at p = ${p} Pa`,
  );
}

/** Throws when value lies below the 273.15 K state at p (liquid above the triple-point pressure, vapour below). */
function checkLowest(given: Given, p: number, value: number, lowRegion: 1 | 2): void {
  const vMin = valueGibbs(given, lowRegion, p, T_MIN);
  if (value < vMin) {
    const vMax = p <= P_MAX_5 ? valueGibbs(given, 5, p, T_MAX_5) : valueGibbs(given, 2, p, T_MAX_2);
    throw rangeError(given, value, vMin, vMax, p);
  }
}

/**
 * Solves (p, h) (given 0) or (p, s) (given 1) for region, T, quality and region-3 density
 * into outRegion, outT, outX, outRho. p [Pa] must be checked. Throws OutOfRangeError when the
 * value lies outside what 273.15 K..2273.15 K (1073.15 K above 50 MPa) give at this pressure.
 */
export function solveP(given: Given, p: number, value: number): void {
  outX = 0;
  outOther = Number.NaN;
  if (p >= P_SAT_MIN && p <= P_SAT_623 && solveSubcriticalFast(given, p, value)) return;
  if (p < P_SAT_MIN) {
    checkLowest(given, p, value, 2);
    solveVapourSide(given, p, value, T_MIN);
    return;
  }
  if (p <= P_SAT_623) {
    // Dome from regions 1 and 2 (R7-97(2012) Section 5 and Figure 1).
    saturation(p);
    const vL = given === 0 ? satHL : satSL;
    if (value <= vL) {
      checkLowest(given, p, value, 1);
      outRegion = 1;
      outT = newtonGibbs(given, 1, p, value, backward(given, 1, p, value), T_MIN, satT);
      return;
    }
    const vV = given === 0 ? satHV : satSV;
    if (value < vV) {
      outRegion = 4;
      outT = satT;
      outX = (value - vL) / (vV - vL);
      return;
    }
    solveVapourSide(given, p, value, satT);
    return;
  }
  // Above psat(623.15 K): region 1 up to 623.15 K, region 3 up to the B23 line, then region 2.
  const v13 = valueGibbs(given, 1, p, T_13);
  if (value <= v13) {
    checkLowest(given, p, value, 1);
    outRegion = 1;
    outT = newtonGibbs(given, 1, p, value, backward(given, 1, p, value), T_MIN, T_13);
    return;
  }
  const t23 = tB23(p);
  const v23 = valueGibbs(given, 2, p, t23);
  if (value >= v23) {
    solveVapourSide(given, p, value, t23);
    return;
  }
  if (p < P_CRIT) {
    saturation(p);
    const vL = given === 0 ? satHL : satSL;
    const vV = given === 0 ? satHV : satSV;
    if (value > vL && value < vV) {
      outRegion = 4;
      outT = satT;
      outX = (value - vL) / (vV - vL);
      return;
    }
    outRegion = 3;
    const guess = backward(given, 3, p, value);
    outT =
      value <= vL
        ? newtonRegion3(given, p, value, guess, T_13, satT)
        : newtonRegion3(given, p, value, guess, satT, t23);
    return;
  }
  outRegion = 3;
  outT = newtonRegion3(given, p, value, backward(given, 3, p, value), T_13, t23);
}

/**
 * The other property of the last fast solution: h [J/kg] when s was given, s [J/(kg K)] when
 * h was given; NaN when the general path ran.
 */
export let outOther = Number.NaN;

/**
 * Speculative Newton in one Gibbs region from the backward-equation guess T0 [K]: pure Newton
 * steps that must stay strictly inside (lo, hi). Returns the converged T, or NaN when a step
 * leaves the bracket or 8 steps do not converge (the caller then takes the general path).
 * Sets outOther at the converged T, corrected to first order (dh = T ds at constant p).
 */
function tryNewton(
  given: Given,
  region: number,
  p: number,
  target: number,
  T0: number,
  lo: number,
  hi: number,
): number {
  let T = T0;
  for (let k = 0; k < 8; k++) {
    gibbsTau(region, p, T);
    const h = hFromGT(T);
    const s = sFromGT();
    const cp = cpFromGT();
    const residual = target - (given === 0 ? h : s);
    const step = given === 0 ? residual / cp : (residual * T) / cp;
    const next = T + step;
    if (!(next > lo && next < hi)) return Number.NaN;
    if (Math.abs(step) <= 1e-9 * T) {
      outOther = given === 0 ? s + residual / T : h + T * residual;
      return next;
    }
    T = next;
  }
  return Number.NaN;
}

/**
 * Fast path between the triple point and psat(623.15 K): try region 2 above Tsat and region 1
 * below it from the backward equations. A Newton solution strictly inside the region's
 * temperature range is the state (h and s rise with T along an isobar, so it is unique);
 * otherwise the general path decides (wet states, edges of the range).
 */
function solveSubcriticalFast(given: Given, p: number, value: number): boolean {
  const Ts = tsat(p);
  // Try the likelier region first (below the critical h or s: liquid); the order only saves time.
  const liquidFirst = given === 0 ? value < 2.087e6 : value < 4.412e3;
  if (
    liquidFirst
      ? tryRegion1(given, p, value, Ts) || tryRegion2(given, p, value, Ts)
      : tryRegion2(given, p, value, Ts) || tryRegion1(given, p, value, Ts)
  ) {
    return true;
  }
  outOther = Number.NaN;
  return false;
}

function tryRegion2(given: Given, p: number, value: number, Ts: number): boolean {
  const T2 = backward(given, 2, p, value);
  if (!(T2 > Ts && T2 < T_MAX_2)) return false;
  const T = tryNewton(given, 2, p, value, T2, Ts, T_MAX_2);
  if (!(T > Ts && T < T_MAX_2)) return false;
  outRegion = 2;
  outT = T;
  return true;
}

function tryRegion1(given: Given, p: number, value: number, Ts: number): boolean {
  const T1 = backward(given, 1, p, value);
  if (!(T1 < Ts && T1 > T_MIN)) return false;
  const T = tryNewton(given, 1, p, value, T1, T_MIN, Ts);
  if (!(T > T_MIN && T < Ts)) return false;
  outRegion = 1;
  outT = T;
  return true;
}

/** Region 2 from Tlow [K] up to 1073.15 K, then region 5 (up to 50 MPa) for (p, h) or (p, s). */
function solveVapourSide(given: Given, p: number, value: number, Tlow: number): void {
  const v2max = valueGibbs(given, 2, p, T_MAX_2);
  if (value <= v2max) {
    outRegion = 2;
    outT = newtonGibbs(given, 2, p, value, backward(given, 2, p, value), Tlow, T_MAX_2);
    return;
  }
  if (p > P_MAX_5) throw rangeError(given, value, valueGibbs(given, 1, p, T_MIN), v2max, p);
  const v5min = valueGibbs(given, 5, p, T_MAX_2);
  const v5max = valueGibbs(given, 5, p, T_MAX_5);
  if (value > v5max) {
    const lowRegion = p >= P_SAT_MIN ? 1 : 2;
    throw rangeError(given, value, valueGibbs(given, lowRegion, p, T_MIN), v5max, p);
  }
  outRegion = 5;
  // Regions 2 and 5 differ slightly at 1073.15 K; a value between the two lands at the bottom of region 5.
  gibbsTau(5, p, T_MAX_2);
  const slope = given === 0 ? cpFromGT() : cpFromGT() / T_MAX_2;
  const guess = T_MAX_2 + (value - v5min) / slope;
  outT = newtonGibbs(given, 5, p, value, guess, T_MAX_2 - 1, T_MAX_5);
}

/** Specific enthalpy [J/kg] of the state found by the last solveP at p [Pa]. */
export function enthalpyOfSolution(p: number): number {
  if (!Number.isNaN(outOther)) return outOther;
  if (outRegion === 4) return satHL + outX * (satHV - satHL);
  if (outRegion === 3) {
    helmholtz3(outRho, outT);
    return h3FromF3(outT);
  }
  gibbsTau(outRegion, p, outT);
  return hFromGT(outT);
}
