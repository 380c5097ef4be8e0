import type { SpeciesData } from './species.js';

/**
 * Peng-Robinson equation of state (Peng and Robinson, Ind. Eng. Chem. Fundam. 15(1), 59-64, 1976):
 *   p = R T/(v - b) - a(T)/(v^2 + 2 b v - b^2)
 * a_i = OMEGA_A R^2 Tc^2/Pc alpha_i(T), alpha_i = [1 + kappa_i (1 - sqrt(T/Tc))]^2,
 * kappa_i = 0.37464 + 1.54226 omega - 0.26992 omega^2, b_i = OMEGA_B R Tc/Pc (their eqs. 9-18),
 * with the van der Waals one-fluid mixing rules a = sum x_i x_j (1 - k_ij) sqrt(a_i a_j),
 * b = sum x_i b_i.
 */

/** Molar gas constant [J/(mol K)], exact (CODATA 2018). */
export const R_MOLAR = 8.314_462_618;

/**
 * OMEGA_B, OMEGA_A and Z_c follow from the critical-point conditions of the equation (the cubic
 * in Z has a triple root at Tc, Pc); Peng and Robinson print them rounded as 0.07780, 0.45724 and
 * 0.307. Full precision here so that the critical point is a true triple root.
 */
export const PR_OMEGA_B = 0.077_796_073_903_888_43;
export const PR_OMEGA_A = 0.457_235_528_921_382_1;
export const PR_ZC = 0.307_401_308_698_703_86;

const SQRT2 = Math.SQRT2;

/** Results of one evaluation, molar basis. Reused between calls to avoid allocation. */
export interface PRResult {
  /** Compressibility factor Z = p v/(R T) [-]. */
  Z: number;
  /** Residual (departure) enthalpy h - h_ig [J/mol]. */
  hRes: number;
  /** Residual entropy s - s_ig(T, p) [J/(mol K)]. */
  sRes: number;
  /** Residual isobaric heat capacity cp - cp_ig [J/(mol K)]. */
  cpRes: number;
  /** Isobaric derivative of the molar volume (dv/dT)_p [m3/(mol K)]. */
  dvdT: number;
}

/**
 * Largest real root of Z^3 + c2 Z^2 + c1 Z + c0 = 0 (Cardano, trigonometric form for three real
 * roots), polished by Newton. The largest root is the vapour-like one: these models are for gas
 * states, and a liquid-like root is never chosen.
 */
export function largestCubicRoot(c2: number, c1: number, c0: number): number {
  const p = c1 - (c2 * c2) / 3;
  const q = (2 * c2 * c2 * c2) / 27 - (c2 * c1) / 3 + c0;
  const disc = (q * q) / 4 + (p * p * p) / 27;
  let t: number;
  if (disc > 0) {
    const sq = Math.sqrt(disc);
    t = Math.cbrt(-q / 2 + sq) + Math.cbrt(-q / 2 - sq);
  } else if (p < 0) {
    const r = Math.sqrt(-p / 3);
    const arg = Math.max(-1, Math.min(1, -q / 2 / (r * r * r))); // rounding can leave |arg| > 1 by 1e-16
    t = 2 * r * Math.cos(Math.acos(arg) / 3);
  } else {
    t = 0; // triple root
  }
  let z = t - c2 / 3;
  for (let i = 0; i < 2; i++) {
    const f = ((z + c2) * z + c1) * z + c0;
    const df = (3 * z + 2 * c2) * z + c1;
    if (df === 0) break;
    const step = f / df;
    // Near a double or triple root Newton is slow and can jump: keep only a small correction.
    if (Math.abs(step) > 1e-6 * Math.abs(z)) break;
    z -= step;
  }
  return z;
}

/**
 * Peng-Robinson parameters of one mixture, computed once; evaluate() does no allocation.
 *
 * sqrt(a_i(T)) is taken as q_i = sqrt(ac_i) [1 + kappa_i (1 - sqrt(T/Tc_i))] = alpha_i - beta_i u,
 * u = sqrt(T), alpha_i = sqrt(ac_i) (1 + kappa_i), beta_i = sqrt(ac_i) kappa_i/sqrt(Tc_i). The
 * mixing rule a = sum x_i x_j (1 - k_ij) q_i q_j is then exactly a quadratic in u:
 *   a(T) = A0 - 2 A1 u + A2 u^2,
 * A0 = sum x_i x_j c_ij alpha_i alpha_j, A1 = sum x_i x_j c_ij (alpha_i beta_j + beta_i alpha_j)/2,
 * A2 = sum x_i x_j c_ij beta_i beta_j, c_ij = 1 - k_ij. The double sum over species is done once
 * here instead of at every temperature, so one evaluation costs one square root whatever the
 * number of species.
 * q_i q_j is the printed sqrt(a_i a_j) while every q_i > 0, i.e. below Tc_i (1 + 1/kappa_i)^2
 * (N2 about 1390 K, CH4 about 2400 K). Above it the alpha function of the equation has passed
 * through zero and q_i changes sign; keeping the sign (the same analytic expression continued)
 * keeps a(T) smooth, whereas |q_i| would put a step into h and s of a mixture at that temperature.
 */
export class PengRobinsonMixture {
  /** Mixture co-volume b [m3/mol]. */
  readonly b: number;
  /** a(T) = A0 - 2 A1 sqrt(T) + A2 T [Pa m6/mol2]; A1 in [Pa m6/(mol2 K^0.5)], A2 in [Pa m6/(mol2 K)]. */
  readonly A0: number;
  readonly A1: number;
  readonly A2: number;

  constructor(
    species: readonly SpeciesData[],
    moleFractions: readonly number[],
    /** Binary interaction parameters k_ij by species id pair; 0 when absent. */
    kij: (a: SpeciesData, b: SpeciesData) => number,
  ) {
    const n = species.length;
    const alpha = new Float64Array(n);
    const beta = new Float64Array(n);
    let b = 0;
    for (let i = 0; i < n; i++) {
      const s = species[i]!;
      const sqrtAc = Math.sqrt((PR_OMEGA_A * R_MOLAR * R_MOLAR * s.Tc * s.Tc) / s.Pc);
      const kappa = 0.37464 + 1.54226 * s.omega - 0.26992 * s.omega * s.omega;
      alpha[i] = sqrtAc * (1 + kappa);
      beta[i] = (sqrtAc * kappa) / Math.sqrt(s.Tc);
      b += moleFractions[i]! * ((PR_OMEGA_B * R_MOLAR * s.Tc) / s.Pc);
    }
    let A0 = 0;
    let A1 = 0;
    let A2 = 0;
    for (let i = 0; i < n; i++) {
      for (let j = 0; j < n; j++) {
        const w = moleFractions[i]! * moleFractions[j]! * (1 - (i === j ? 0 : kij(species[i]!, species[j]!)));
        A0 += w * alpha[i]! * alpha[j]!;
        A1 += 0.5 * w * (alpha[i]! * beta[j]! + beta[i]! * alpha[j]!);
        A2 += w * beta[i]! * beta[j]!;
      }
    }
    this.b = b;
    this.A0 = A0;
    this.A1 = A1;
    this.A2 = A2;
  }

  /**
   * The mixture's a [Pa m6/mol2] and its first two T-derivatives [Pa m6/(mol2 K)],
   * [Pa m6/(mol2 K2)] at T [K], into out[0..2]; u = sqrt(T), passed in as evaluate() has it.
   */
  attraction(T: number, out: Float64Array, u = Math.sqrt(T)): void {
    out[0] = this.A0 - 2 * this.A1 * u + this.A2 * T;
    out[1] = this.A2 - this.A1 / u;
    out[2] = this.A1 / (2 * T * u);
  }

  private readonly aScratch = new Float64Array(3);

  /**
   * Z and the residual properties at p [Pa], T [K], written into out. Residual functions for
   * this equation (e.g. Poling, Prausnitz and O'Connell, 5th ed., Table 6-3):
   *   h - h_ig = R T (Z - 1) + (T a' - a)/(2 sqrt2 b) L
   *   s - s_ig = R ln(Z - B) + a'/(2 sqrt2 b) L,   L = ln[(Z + (1 + sqrt2) B)/(Z + (1 - sqrt2) B)]
   *   cv - cv_ig = T a''/(2 sqrt2 b) L,  cp - cv = -T (dp/dT)_v^2/(dp/dv)_T,
   *   (dv/dT)_p = -(dp/dT)_v/(dp/dv)_T.
   */
  evaluate(p: number, T: number, out: PRResult): PRResult {
    const u = Math.sqrt(T);
    const as = this.aScratch;
    this.attraction(T, as, u);
    const a = as[0]!;
    const da = as[1]!;
    const d2a = as[2]!;
    const b = this.b;
    const RT = R_MOLAR * T;
    const A = (a * p) / (RT * RT);
    const B = (b * p) / RT;
    const Z = largestCubicRoot(B - 1, A - 3 * B * B - 2 * B, B * B + B * B * B - A * B);
    const L = Math.log((Z + (1 + SQRT2) * B) / (Z + (1 - SQRT2) * B));
    const k = 1 / (2 * SQRT2 * b);
    out.Z = Z;
    out.hRes = RT * (Z - 1) + (T * da - a) * k * L;
    out.sRes = R_MOLAR * Math.log(Z - B) + da * k * L;
    const v = (Z * RT) / p;
    const vb = v - b;
    const den = v * v + 2 * b * v - b * b;
    const dpdT = R_MOLAR / vb - da / den;
    const dpdv = -RT / (vb * vb) + (2 * a * (v + b)) / (den * den);
    out.cpRes = T * d2a * k * L - R_MOLAR - (T * dpdT * dpdT) / dpdv;
    out.dvdT = -dpdT / dpdv;
    return out;
  }
}
