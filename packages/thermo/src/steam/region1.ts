import { type PolyTable, poly2, poly2Derivatives, poly2YDerivatives, polyTable } from './poly.js';
import { G, GT } from './scratch.js';

/**
 * IAPWS-IF97 region 1 (compressed liquid): the basic Gibbs free energy equation
 * gamma(pi, tau) = sum n_i (7.1 - pi)^I_i (tau - 1.222)^J_i, R7-97(2012) Eq. (7),
 * with pi = p/16.53 MPa and tau = 1386 K/T, and the backward equations T(p,h), Eq. (11),
 * and T(p,s), Eq. (13).
 */

/** Reducing pressure of region 1 [Pa], R7-97(2012) Eq. (7). */
const P_STAR = 16.53e6;
/** Reducing temperature of region 1 [K], R7-97(2012) Eq. (7). */
const T_STAR = 1386;

/** R7-97(2012) Table 2: numerical values of the coefficients and exponents of Eq. (7). */
const GIBBS: PolyTable = polyTable(
  [
    0, 0, 0, 0, 0, 0, 0, 0, 1, 1, 1, 1, 1, 1, 2, 2, 2, 2, 2, 3, 3, 3, 4, 4, 4, 5, 8, 8, 21, 23, 29, 30, 31,
    32,
  ],
  [
    -2, -1, 0, 1, 2, 3, 4, 5, -9, -7, -1, 0, 1, 3, -3, 0, 1, 3, 17, -4, 0, 6, -5, -2, 10, -8, -11, -6, -29,
    -31, -38, -39, -40, -41,
  ],
  [
    0.14632971213167, -0.84548187169114, -3.756360367204, 3.3855169168385, -0.95791963387872,
    0.15772038513228, -0.016616417199501, 0.00081214629983568, 0.00028319080123804, -0.00060706301565874,
    -0.018990068218419, -0.032529748770505, -0.021841717175414, -5.283835796993e-5, -0.00047184321073267,
    -0.00030001780793026, 4.7661393906987e-5, -4.4141845330846e-6, -7.2694996297594e-16, -3.1679644845054e-5,
    -2.8270797985312e-6, -8.5205128120103e-10, -2.2425281908e-6, -6.5171222895601e-7, -1.4341729937924e-13,
    -4.0516996860117e-7, -1.2734301741641e-9, -1.7424871230634e-10, -6.8762131295531e-19, 1.4478307828521e-20,
    2.6335781662795e-23, -1.1947622640071e-23, 1.8228094581404e-24, -9.3537087292458e-26,
  ],
);

/** R7-97(2012) Table 6: coefficients and exponents of the backward equation T(p,h), Eq. (11). */
const T_PH: PolyTable = polyTable(
  [0, 0, 0, 0, 0, 0, 1, 1, 1, 1, 1, 1, 1, 2, 2, 3, 3, 4, 5, 6],
  [0, 1, 2, 6, 22, 32, 0, 1, 2, 3, 4, 10, 32, 10, 32, 10, 32, 32, 32, 32],
  [
    -238.72489924521, 404.21188637945, 113.49746881718, -5.8457616048039, -0.0001528548241314,
    -1.0866707695377e-6, -13.391744872602, 43.211039183559, -54.010067170506, 30.535892203916,
    -6.5964749423638, 0.0093965400878363, 1.157364750534e-7, -2.5858641282073e-5, -4.0644363084799e-9,
    6.6456186191635e-8, 8.0670734103027e-11, -9.3477771213947e-13, 5.8265442020601e-15, -1.5020185953503e-17,
  ],
);

/** R7-97(2012) Table 8: coefficients and exponents of the backward equation T(p,s), Eq. (13). */
const T_PS: PolyTable = polyTable(
  [0, 0, 0, 0, 0, 0, 1, 1, 1, 1, 1, 1, 2, 2, 2, 2, 2, 3, 3, 4],
  [0, 1, 2, 3, 11, 31, 0, 1, 2, 3, 12, 31, 0, 1, 2, 9, 31, 10, 32, 32],
  [
    174.78268058307, 34.806930892873, 6.5292584978455, 0.33039981775489, -1.9281382923196e-7,
    -2.4909197244573e-23, -0.26107636489332, 0.22592965981586, -0.064256463395226, 0.0078876289270526,
    3.5672110607366e-10, 1.7332496994895e-24, 0.00056608900654837, -0.00032635483139717, 4.4778286690632e-5,
    -5.1322156908507e-10, -4.2522657042207e-26, 2.6400441360689e-13, 7.8124600459723e-29,
    -3.0732199903668e-31,
  ],
);

const SUMS = new Float64Array(6);

/** Evaluates all derivatives of Eq. (7) at p [Pa], T [K] into G (see scratch.ts). */
export function gibbs1(p: number, T: number): void {
  const pi = p / P_STAR;
  const tau = T_STAR / T;
  poly2Derivatives(GIBBS, 7.1 - pi, tau - 1.222, SUMS);
  // d/dpi of (7.1 - pi)^I flips the sign of odd pi-derivatives (R7-97(2012) Table 4).
  G[0] = SUMS[0]!;
  G[1] = -SUMS[1]!;
  G[2] = SUMS[2]!;
  G[3] = SUMS[3]!;
  G[4] = SUMS[4]!;
  G[5] = -SUMS[5]!;
  G[6] = pi;
  G[7] = tau;
}

/** Evaluates gamma, gamma_tau, gamma_tautau of Eq. (7) at p [Pa], T [K] into GT. */
export function gibbs1Tau(p: number, T: number): void {
  const tau = T_STAR / T;
  poly2YDerivatives(GIBBS, 7.1 - p / P_STAR, tau - 1.222, GT);
  GT[3] = tau;
}

/** Backward equation T(p,h) of region 1 [K], R7-97(2012) Eq. (11): eta = h/2500 kJ/kg. */
export function backwardT1PH(p: number, h: number): number {
  return poly2(T_PH, p / 1e6, h / 2.5e6 + 1);
}

/** Backward equation T(p,s) of region 1 [K], R7-97(2012) Eq. (13): sigma = s/1 kJ/(kg K). */
export function backwardT1PS(p: number, s: number): number {
  return poly2(T_PS, p / 1e6, s / 1e3 + 2);
}
