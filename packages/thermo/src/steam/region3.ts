import { ConvergenceError } from '../errors.js';
import { R, RHO_CRIT, T_CRIT } from './constants.js';
import { type PolyTable, poly2Derivatives, polyTable } from './poly.js';

/**
 * IAPWS-IF97 region 3 (near-critical and supercritical dense fluid): the basic Helmholtz free
 * energy equation phi(delta, tau) = n1 ln(delta) + sum_{i=2..40} n_i delta^I_i tau^J_i,
 * R7-97(2012) Eq. (28), with delta = rho/322 kg/m3 and tau = 647.096 K/T.
 */

/** R7-97(2012) Table 30: n1, the coefficient of ln(delta) in Eq. (28). */
const N1 = 0.10658070028513e1;

/** R7-97(2012) Table 30: coefficients n2..n40 and exponents of Eq. (28). */
const HELMHOLTZ: PolyTable = polyTable(
  [
    0, 0, 0, 0, 0, 0, 0, 1, 1, 1, 1, 2, 2, 2, 2, 2, 2, 3, 3, 3, 3, 3, 4, 4, 4, 4, 5, 5, 5, 6, 6, 6, 7, 8, 9,
    9, 10, 10, 11,
  ],
  [
    0, 1, 2, 7, 10, 12, 23, 2, 6, 15, 17, 0, 2, 6, 7, 22, 26, 0, 2, 4, 16, 26, 0, 2, 4, 26, 1, 3, 26, 0, 2,
    26, 2, 26, 2, 26, 0, 1, 26,
  ],
  [
    -15.732845290239, 20.944396974307, -7.6867707878716, 2.6185947787954, -2.808078114862, 1.2053369696517,
    -0.0084566812812502, -1.2654315477714, -1.1524407806681, 0.88521043984318, -0.64207765181607,
    0.38493460186671, -0.85214708824206, 4.8972281541877, -3.0502617256965, 0.039420536879154,
    0.12558408424308, -0.2799932969871, 1.389979956946, -2.018991502357, -0.0082147637173963,
    -0.47596035734923, 0.0439840744735, -0.44476435428739, 0.90572070719733, 0.70522450087967,
    0.10770512626332, -0.32913623258954, -0.50871062041158, -0.022175400873096, 0.094260751665092,
    0.16436278447961, -0.013503372241348, -0.014834345352472, 0.00057922953628084, 0.0032308904703711,
    8.0964802996215e-5, -0.00016557679795037, -4.4923899061815e-5,
  ],
);

/**
 * Dimensionless Helmholtz derivatives of the last evaluation:
 * [phi, phi_delta, phi_deltadelta, phi_tau, phi_tautau, phi_deltatau, delta, tau].
 */
export const F3 = new Float64Array(8);
const SUMS = new Float64Array(6);

/** Evaluates all derivatives of Eq. (28) at density rho [kg/m3] and T [K] into F3. */
export function helmholtz3(rho: number, T: number): void {
  const delta = rho / RHO_CRIT;
  const tau = T_CRIT / T;
  poly2Derivatives(HELMHOLTZ, delta, tau, SUMS);
  F3[0] = N1 * Math.log(delta) + SUMS[0]!;
  F3[1] = N1 / delta + SUMS[1]!;
  F3[2] = -N1 / (delta * delta) + SUMS[2]!;
  F3[3] = SUMS[3]!;
  F3[4] = SUMS[4]!;
  F3[5] = SUMS[5]!;
  F3[6] = delta;
  F3[7] = tau;
}

/** Pressure [Pa] at rho [kg/m3], T [K] from the last helmholtz3 call: p = rho R T delta phi_delta (Table 31). */
export function pressure3(rho: number, T: number): number {
  helmholtz3(rho, T);
  return rho * R * T * F3[6]! * F3[1]!;
}

const DENSITY_MAX_STEPS = 100;

/**
 * Density [kg/m3] at p [Pa], T [K] on the branch of the starting density rho0 [kg/m3]
 * (from the backward equations v(p,T) of IAPWS SR5-05): Newton steps on p(rho, T) = p,
 * each step kept within 5 % of rho so the iteration stays on its branch. Leaves F3 evaluated
 * at the returned density.
 */
export function density3(p: number, T: number, rho0: number): number {
  let rho = rho0;
  let residual = Number.POSITIVE_INFINITY;
  for (let k = 0; k < DENSITY_MAX_STEPS; k++) {
    helmholtz3(rho, T);
    const delta = F3[6]!;
    const fd = F3[1]!;
    const rt = R * T;
    const pk = rho * rt * delta * fd;
    residual = pk - p;
    // dp/drho at constant T = R T (2 delta phi_delta + delta^2 phi_deltadelta) (Table 31 derivation).
    const dpdrho = rt * (2 * delta * fd + delta * delta * F3[2]!);
    if (Math.abs(residual) <= 1e-13 * p) return rho;
    if (!(dpdrho > 0)) break;
    let step = -residual / dpdrho;
    const limit = 0.05 * rho;
    if (step > limit) step = limit;
    else if (step < -limit) step = -limit;
    rho += step;
    if (Math.abs(step) <= 1e-13 * rho) {
      helmholtz3(rho, T);
      return rho;
    }
  }
  throw new ConvergenceError('IAPWS-IF97 region 3 density from (p, T)', DENSITY_MAX_STEPS, residual);
}
