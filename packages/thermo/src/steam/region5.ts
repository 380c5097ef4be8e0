import { type PolyTable, poly2Derivatives, poly2YDerivatives, polyTable } from './poly.js';
import { G, GT } from './scratch.js';

/**
 * IAPWS-IF97 region 5 (high-temperature steam, 1073.15 K to 2273.15 K, up to 50 MPa): the
 * basic Gibbs equation gamma = gamma0 + gammaR, R7-97(2012) Eqs. (32) to (34), with
 * pi = p/1 MPa and tau = 1000 K/T; coefficients as revised in 2007 and kept in R7-97(2012).
 */

const T_STAR = 1000;

/** R7-97(2012) Table 37: ideal-gas part gamma0 of Eq. (33). */
const IDEAL: PolyTable = polyTable(
  [0, 0, 0, 0, 0, 0],
  [0, 1, -3, -2, -1, 2],
  [
    -13.179983674201, 6.8540841634434, -0.024805148933466, 0.36901534980333, -3.1161318213925,
    -0.32961626538917,
  ],
);

/** R7-97(2012) Table 38: residual part gammaR of Eq. (34). */
const RESIDUAL: PolyTable = polyTable(
  [1, 1, 1, 2, 2, 3],
  [1, 2, 3, 3, 9, 7],
  [
    0.0015736404855259, 0.00090153761673944, -0.0050270077677648, 2.2440037409485e-6, -4.1163275453471e-6,
    3.7919454822955e-8,
  ],
);

const SUMS = new Float64Array(6);
const IDEAL_SUMS = new Float64Array(3);

/** Evaluates all derivatives of gamma at p [Pa], T [K] into G. */
export function gibbs5(p: number, T: number): void {
  const pi = p / 1e6;
  const tau = T_STAR / T;
  poly2YDerivatives(IDEAL, 1, tau, IDEAL_SUMS);
  poly2Derivatives(RESIDUAL, pi, tau, SUMS);
  G[0] = Math.log(pi) + IDEAL_SUMS[0]! + SUMS[0]!;
  G[1] = 1 / pi + SUMS[1]!;
  G[2] = -1 / (pi * pi) + SUMS[2]!;
  G[3] = IDEAL_SUMS[1]! + SUMS[3]!;
  G[4] = IDEAL_SUMS[2]! + SUMS[4]!;
  G[5] = SUMS[5]!;
  G[6] = pi;
  G[7] = tau;
}

/** Evaluates gamma, gamma_tau, gamma_tautau at p [Pa], T [K] into GT. */
export function gibbs5Tau(p: number, T: number): void {
  const pi = p / 1e6;
  const tau = T_STAR / T;
  poly2YDerivatives(IDEAL, 1, tau, IDEAL_SUMS);
  poly2YDerivatives(RESIDUAL, pi, tau, GT);
  GT[0] = Math.log(pi) + IDEAL_SUMS[0]! + GT[0]!;
  GT[1] = IDEAL_SUMS[1]! + GT[1]!;
  GT[2] = IDEAL_SUMS[2]! + GT[2]!;
  GT[3] = tau;
}
