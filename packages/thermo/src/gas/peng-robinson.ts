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

/** Peng-Robinson parameters of one mixture, computed once; evaluate() does no allocation. */
export class PengRobinsonMixture {
  private readonly n: number;
  private readonly x: Float64Array;
  private readonly sqrtAc: Float64Array;
  private readonly kappa: Float64Array;
  private readonly Tc: Float64Array;
  /** (1 - k_ij), row-major n x n. */
  private readonly cij: Float64Array;
  /** Mixture co-volume b [m3/mol]. */
  readonly b: number;
  private readonly q: Float64Array;
  private readonly dq: Float64Array;
  private readonly d2q: Float64Array;

  constructor(
    species: readonly SpeciesData[],
    moleFractions: readonly number[],
    /** Binary interaction parameters k_ij by species id pair; 0 when absent. */
    kij: (a: SpeciesData, b: SpeciesData) => number,
  ) {
    const n = species.length;
    this.n = n;
    this.x = Float64Array.from(moleFractions);
    this.sqrtAc = new Float64Array(n);
    this.kappa = new Float64Array(n);
    this.Tc = new Float64Array(n);
    this.cij = new Float64Array(n * n);
    let b = 0;
    for (let i = 0; i < n; i++) {
      const s = species[i]!;
      this.sqrtAc[i] = Math.sqrt((PR_OMEGA_A * R_MOLAR * R_MOLAR * s.Tc * s.Tc) / s.Pc);
      this.kappa[i] = 0.37464 + 1.54226 * s.omega - 0.26992 * s.omega * s.omega;
      this.Tc[i] = s.Tc;
      b += this.x[i]! * ((PR_OMEGA_B * R_MOLAR * s.Tc) / s.Pc);
      for (let j = 0; j < n; j++) this.cij[i * n + j] = 1 - (i === j ? 0 : kij(s, species[j]!));
    }
    this.b = b;
    this.q = new Float64Array(n);
    this.dq = new Float64Array(n);
    this.d2q = new Float64Array(n);
  }

  /**
   * Z and the residual properties at p [Pa], T [K], written into out. Residual functions for
   * this equation (e.g. Poling, Prausnitz and O'Connell, 5th ed., Table 6-3):
   *   h - h_ig = R T (Z - 1) + (T a' - a)/(2 sqrt2 b) L
   *   s - s_ig = R ln(Z - B) + a'/(2 sqrt2 b) L,   L = ln[(Z + (1 + sqrt2) B)/(Z + (1 - sqrt2) B)]
   *   cv - cv_ig = T a''/(2 sqrt2 b) L,  cp - cv = -T (dp/dT)_v^2/(dp/dv)_T.
   */
  evaluate(p: number, T: number, out: PRResult): PRResult {
    const n = this.n;
    const { x, q, dq, d2q, cij } = this;
    // sqrt(a_i) = sqrt(ac_i) m_i with m_i = 1 + kappa_i (1 - sqrt(T/Tc_i)); its T-derivatives.
    for (let i = 0; i < n; i++) {
      const sTTc = Math.sqrt(T * this.Tc[i]!);
      const k = this.kappa[i]! * this.sqrtAc[i]!;
      q[i] = this.sqrtAc[i]! * (1 + this.kappa[i]! * (1 - Math.sqrt(T / this.Tc[i]!)));
      dq[i] = -k / (2 * sTTc);
      d2q[i] = k / (4 * T * sTTc);
    }
    let a = 0;
    let da = 0;
    let d2a = 0;
    for (let i = 0; i < n; i++) {
      let sq = 0;
      let sdq = 0;
      for (let j = 0; j < n; j++) {
        const w = x[j]! * cij[i * n + j]!;
        sq += w * q[j]!;
        sdq += w * dq[j]!;
      }
      a += x[i]! * q[i]! * sq;
      da += 2 * x[i]! * dq[i]! * sq;
      d2a += 2 * x[i]! * (d2q[i]! * sq + dq[i]! * sdq);
    }
    const b = this.b;
    const RT = R_MOLAR * T;
    const A = (a * p) / (RT * RT);
    const B = (b * p) / RT;
    const Z = largestCubicRoot(-(1 - B), A - 3 * B * B - 2 * B, -(A * B - B * B - B * B * B));
    const L = Math.log((Z + (1 + SQRT2) * B) / (Z + (1 - SQRT2) * B));
    const k = 1 / (2 * SQRT2 * b);
    out.Z = Z;
    out.hRes = RT * (Z - 1) + (T * da - a) * k * L;
    out.sRes = R_MOLAR * Math.log(Z - B) + da * k * L;
    const v = (Z * RT) / p;
    const den = v * v + 2 * b * v - b * b;
    const dpdT = R_MOLAR / (v - b) - da / den;
    const dpdv = -RT / ((v - b) * (v - b)) + (2 * a * (v + b)) / (den * den);
    out.cpRes = T * d2a * k * L - R_MOLAR - (T * dpdT * dpdT) / dpdv;
    return out;
  }
}
