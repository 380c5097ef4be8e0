/**
 * Ideal-gas heat capacity, enthalpy and entropy of single species from NASA 7-coefficient
 * polynomials, two temperature ranges joined at T_mid = 1000 K:
 *   cp/R  = a1 + a2 T + a3 T^2 + a4 T^3 + a5 T^4
 *   H/RT  = a1 + a2 T/2 + a3 T^2/3 + a4 T^3/4 + a5 T^4/5 + a6/T
 *   S0/R  = a1 ln T + a2 T + a3 T^2/2 + a4 T^3/3 + a5 T^4/4 + a7
 * H includes the enthalpy of formation at 298.15 K; S0 is the third-law entropy at the standard
 * pressure p0 = 1 bar (McBride, Zehe and Gordon, NASA/TP-2002-211556, section 2, which defines
 * the same functions; the 7-term form is its predecessor's, McBride, Gordon and Reno, NASA
 * TM-4513, 1993).
 */

/** Standard-state pressure of the NASA tables [Pa]. */
export const NASA_STANDARD_PRESSURE = 100_000;

/** Temperature at which the two ranges meet [K]. */
export const NASA_T_MID = 1000;

export interface Nasa7Entry {
  /** Lower limit of the fit as published [K]. */
  readonly Tmin: number;
  /** Upper limit of the fit as published [K]. */
  readonly Tmax: number;
  /** a1..a7 for Tmin..1000 K. */
  readonly low: readonly [number, number, number, number, number, number, number];
  /** a1..a7 for 1000 K..Tmax. */
  readonly high: readonly [number, number, number, number, number, number, number];
}

/**
 * Coefficients, NASA 7-term fits of the NASA Glenn thermodynamic database (McBride, Gordon and
 * Reno, NASA TM-4513, 1993; the same data as NASA/TP-2002-211556 refitted to 7 terms), as
 * distributed in the NASA thermo file of the Caltech Shock and Detonation Toolbox and converted
 * without change to Cantera's data/nasa_gas.yaml (read 2026 from Cantera/cantera commit
 * 0b950018). Species names are ours (see species.ts). H2S and the pentanes are fitted from
 * 298.15 K or 300 K to 5000 K only.
 */
export const NASA7 = {
  N2: {
    Tmin: 200,
    Tmax: 6000,
    low: [
      3.53100528, -1.23660987e-4, -5.02999437e-7, 2.43530612e-9, -1.40881235e-12, -1046.97628, 2.96747468,
    ],
    high: [
      2.95257626, 1.39690057e-3, -4.92631691e-7, 7.86010367e-11, -4.60755321e-15, -923.948645, 5.87189252,
    ],
  },
  O2: {
    Tmin: 200,
    Tmax: 6000,
    low: [3.78245636, -2.99673415e-3, 9.847302e-6, -9.68129508e-9, 3.24372836e-12, -1063.94356, 3.65767573],
    high: [
      3.66096083, 6.56365523e-4, -1.41149485e-7, 2.05797658e-11, -1.29913248e-15, -1215.97725, 3.41536184,
    ],
  },
  Ar: {
    Tmin: 200,
    Tmax: 6000,
    low: [2.5, 0, 0, 0, 0, -745.375, 4.37967491],
    high: [2.5, 0, 0, 0, 0, -745.375, 4.37967491],
  },
  CO2: {
    Tmin: 200,
    Tmax: 6000,
    low: [2.35677352, 8.98459677e-3, -7.12356269e-6, 2.45919022e-9, -1.43699548e-13, -48371.9697, 9.90105222],
    high: [
      4.63659493, 2.74131991e-3, -9.95828531e-7, 1.60373011e-10, -9.16103468e-15, -49024.9341, -1.93534855,
    ],
  },
  H2O: {
    Tmin: 200,
    Tmax: 6000,
    low: [
      4.19864056, -2.0364341e-3, 6.52040211e-6, -5.48797062e-9, 1.77197817e-12, -30293.7267, -0.849032208,
    ],
    high: [
      2.67703787, 2.97318329e-3, -7.7376969e-7, 9.44336689e-11, -4.26900959e-15, -29885.8938, 6.88255571,
    ],
  },
  CH4: {
    Tmin: 200,
    Tmax: 6000,
    low: [5.14987613, -0.0136709788, 4.91800599e-5, -4.84743026e-8, 1.66693956e-11, -10246.6476, -4.64130376],
    high: [
      1.63552643, 0.0100842795, -3.36916254e-6, 5.34958667e-10, -3.15518833e-14, -10005.6455, 9.99313326,
    ],
  },
  C2H6: {
    Tmin: 200,
    Tmax: 6000,
    low: [4.29142492, -5.5015427e-3, 5.99438288e-5, -7.08466285e-8, 2.68685771e-11, -11522.2055, 2.66682316],
    high: [
      4.04666674, 0.0153538766, -5.47039321e-6, 8.77826228e-10, -5.23167305e-14, -12447.3512, -0.968683607,
    ],
  },
  C3H8: {
    Tmin: 200,
    Tmax: 6000,
    low: [4.2110262, 1.71599803e-3, 7.06183472e-5, -9.19594116e-8, 3.64421372e-11, -14381.2106, 5.60930491],
    high: [6.66789363, 0.0206120214, -7.36553027e-6, 1.18440761e-9, -7.0695321e-14, -16274.8521, -13.1859503],
  },
  'n-C4H10': {
    Tmin: 200,
    Tmax: 6000,
    low: [6.14746806, 1.55947389e-4, 9.67913517e-5, -1.2548391e-7, 4.97816555e-11, -17599.4402, -1.09409879],
    high: [
      9.44535834, 0.0257858073, -9.23619122e-6, 1.48632755e-9, -8.87897158e-14, -20138.2165, -26.3470076,
    ],
  },
  'i-C4H10': {
    Tmin: 200,
    Tmax: 6000,
    low: [4.45479276, 8.26057985e-3, 8.29886664e-5, -1.14647642e-7, 4.64570101e-11, -18459.3931, 4.92743175],
    high: [9.76991245, 0.025499721, -9.14142932e-6, 1.47328271e-9, -8.80800188e-14, -21405.2647, -30.0329101],
  },
  'n-C5H12': {
    Tmin: 298.15,
    Tmax: 5000,
    low: [1.8983679, 0.041203037, 1.2312175e-5, -3.6589501e-8, 1.5042509e-11, -20091.5, 18.679082],
    high: [13.546998, 0.028421786, -9.4174648e-6, 1.3893589e-9, -7.4212609e-14, -24577.68, -47.021175],
  },
  'i-C5H12': {
    Tmin: 298.15,
    Tmax: 5000,
    low: [1.0832882, 0.044571076, 8.2389934e-6, -3.5258047e-8, 1.5785762e-11, -20807.535, 21.795155],
    high: [12.327787, 0.030613087, -9.8415785e-6, 1.3919776e-9, -7.0337345e-14, -25037.492, -41.133494],
  },
  H2: {
    Tmin: 200,
    Tmax: 6000,
    low: [2.34433112, 7.98052075e-3, -1.9478151e-5, 2.01572094e-8, -7.37611761e-12, -917.935173, 0.683010238],
    high: [
      2.93286579, 8.26607967e-4, -1.46402335e-7, 1.54100359e-11, -6.88804432e-16, -813.065597, -1.02432887,
    ],
  },
  CO: {
    Tmin: 200,
    Tmax: 6000,
    low: [3.57953347, -6.1035368e-4, 1.01681433e-6, 9.07005884e-10, -9.04424499e-13, -14344.086, 3.50840928],
    high: [
      3.04848583, 1.35172818e-3, -4.85794075e-7, 7.88536486e-11, -4.69807489e-15, -14266.1171, 6.0170979,
    ],
  },
  He: {
    Tmin: 200,
    Tmax: 6000,
    low: [2.5, 0, 0, 0, 0, -745.375, 0.928724724],
    high: [2.5, 0, 0, 0, 0, -745.375, 0.928724724],
  },
  H2S: {
    Tmin: 300,
    Tmax: 5000,
    low: [3.9323476, -5.0260905e-4, 4.5928473e-6, -3.1807214e-9, 6.6497561e-13, -3650.5359, 2.3157905],
    high: [2.7452199, 4.0434607e-3, -1.538451e-6, 2.7520249e-10, -1.8592095e-14, -3419.9444, 8.0546745],
  },
} as const satisfies Record<string, Nasa7Entry>;

export type SpeciesId = keyof typeof NASA7;

type Coeffs = ArrayLike<number>;

/** cp/R at T [K] for one coefficient set. */
export function cpR(a: Coeffs, T: number): number {
  return a[0]! + T * (a[1]! + T * (a[2]! + T * (a[3]! + T * a[4]!)));
}

/** H/R [K] at T [K] (formation enthalpy included). */
export function hR(a: Coeffs, T: number): number {
  return T * (a[0]! + T * (a[1]! / 2 + T * (a[2]! / 3 + T * (a[3]! / 4 + (T * a[4]!) / 5)))) + a[5]!;
}

/** S0/R at T [K] and p0 = 1 bar. */
export function s0R(a: Coeffs, T: number): number {
  return a[0]! * Math.log(T) + T * (a[1]! + T * (a[2]! / 2 + T * (a[3]! / 3 + (T * a[4]!) / 4))) + a[6]!;
}

/** The coefficient set that applies at T [K] (the caller checks the range). */
export function rangeAt(entry: Nasa7Entry, T: number): Coeffs {
  return T < NASA_T_MID ? entry.low : entry.high;
}
