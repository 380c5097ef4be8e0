import { BadInputError } from '../errors.js';
import type { FluidState } from '../fluid.js';

export interface PolytropicResult {
  /** Polytropic volume exponent n = ln(p2/p1) / ln(v1/v2). */
  readonly exponent: number;
  /** Isentropic volume exponent ns = ln(p2/p1) / ln(v1/v2s). */
  readonly isentropicExponent: number;
  /** Schultz polytropic work factor f = (h2s - h1) / ((ns/(ns-1)) (p2 v2s - p1 v1)). */
  readonly factor: number;
  /** Polytropic head [J/kg] = f (n/(n-1)) (p2 v2 - p1 v1). */
  readonly head: number;
  /** Polytropic efficiency = head / (h2 - h1). */
  readonly efficiency: number;
}

/**
 * Polytropic head and efficiency of a compression by the Schultz (1962) method, as used in
 * ASME PTC 10-1997 (section 5, polytropic work with the Schultz factor). Real-gas: the
 * exponents come from the specific volumes the property model gives.
 */
export function schultzPolytropic(
  inlet: FluidState,
  outlet: FluidState,
  outletIsentropic: FluidState,
): PolytropicResult {
  const lnPr = Math.log(outlet.p / inlet.p);
  if (!(lnPr > 0)) {
    throw new BadInputError(
      'outlet.p',
      `Schultz method needs p2 > p1, got p1 = ${inlet.p} Pa, p2 = ${outlet.p} Pa`,
    );
  }
  const n = lnPr / Math.log(inlet.v / outlet.v);
  const ns = lnPr / Math.log(inlet.v / outletIsentropic.v);
  const factor =
    (outletIsentropic.h - inlet.h) / ((ns / (ns - 1)) * (outlet.p * outletIsentropic.v - inlet.p * inlet.v));
  const head = factor * (n / (n - 1)) * (outlet.p * outlet.v - inlet.p * inlet.v);
  return { exponent: n, isentropicExponent: ns, factor, head, efficiency: head / (outlet.h - inlet.h) };
}

/**
 * Ideal-gas polytropic efficiency in logarithmic form, eta_p = ((k-1)/k) ln(p2/p1) / ln(T2/T1),
 * with k = cp/cv from the mean heat capacity over the process: the cross-check for the Schultz
 * method (they agree exactly for a constant-heat-capacity ideal gas).
 */
export function polytropicEfficiencyIdealGas(
  /** Inlet pressure [Pa]. */ p1: number,
  /** Inlet temperature [K]. */ T1: number,
  /** Outlet pressure [Pa]. */ p2: number,
  /** Outlet temperature [K]. */ T2: number,
  /** Isentropic exponent k = cp/cv. */ k: number,
): number {
  if (!(p2 > p1) || !(T2 > T1) || !(k > 1)) {
    throw new BadInputError(
      'polytropicEfficiencyIdealGas',
      `needs p2 > p1, T2 > T1, k > 1; got p1 = ${p1} Pa, p2 = ${p2} Pa, T1 = ${T1} K, T2 = ${T2} K, k = ${k}`,
    );
  }
  return (((k - 1) / k) * Math.log(p2 / p1)) / Math.log(T2 / T1);
}
