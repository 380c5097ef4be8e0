/**
 * IAPWS-IF97 region 4, the saturation line: the saturation-pressure equation (30) and the
 * saturation-temperature equation (31) of R7-97(2012), both from the implicit quadratic
 * Eq. (29), and the B23 boundary between regions 2 and 3, Eqs. (5) and (6).
 */

/** R7-97(2012) Table 34: coefficients n1..n10 of Eqs. (29) to (31). */
const N: readonly number[] = [
  0, 1167.0521452767, -724213.16703206, -17.073846940092, 12020.82470247, -3232555.0322333, 14.91510861353,
  -4823.2657361591, 405113.40542057, -0.23855557567849, 650.17534844798,
];
const n1 = N[1]!;
const n2 = N[2]!;
const n3 = N[3]!;
const n4 = N[4]!;
const n5 = N[5]!;
const n6 = N[6]!;
const n7 = N[7]!;
const n8 = N[8]!;
const n9 = N[9]!;
const n10 = N[10]!;

/** Saturation pressure [Pa] at T [K], R7-97(2012) Eq. (30); the caller checks 273.15 K <= T <= 647.096 K. */
export function psat(T: number): number {
  const theta = T + n9 / (T - n10);
  const A = theta * theta + n1 * theta + n2;
  const B = n3 * theta * theta + n4 * theta + n5;
  const C = n6 * theta * theta + n7 * theta + n8;
  const r = (2 * C) / (-B + Math.sqrt(B * B - 4 * A * C));
  const r2 = r * r;
  return r2 * r2 * 1e6;
}

/** Saturation temperature [K] at p [Pa], R7-97(2012) Eq. (31); the caller checks 611.213 Pa <= p <= 22.064 MPa. */
export function tsat(p: number): number {
  const beta = Math.sqrt(Math.sqrt(p / 1e6));
  const beta2 = beta * beta;
  const E = beta2 + n3 * beta + n6;
  const F = n1 * beta2 + n4 * beta + n7;
  const G = n2 * beta2 + n5 * beta + n8;
  const D = (2 * G) / (-F - Math.sqrt(F * F - 4 * E * G));
  const a = n10 + D;
  return (a - Math.sqrt(a * a - 4 * (n9 + n10 * D))) / 2;
}

/** R7-97(2012) Table 1: coefficients n1..n5 of the B23 equations (5) and (6). */
const B23: readonly number[] = [
  0.34805185628969e3, -0.11671859879975e1, 0.10192970039326e-2, 0.57254459862746e3, 0.1391883977887e2,
];

/** Pressure on the boundary between regions 2 and 3 [Pa] at T [K], R7-97(2012) Eq. (5). */
export function pB23(T: number): number {
  return (B23[0]! + B23[1]! * T + B23[2]! * T * T) * 1e6;
}

/** Temperature on the boundary between regions 2 and 3 [K] at p [Pa], R7-97(2012) Eq. (6). */
export function tB23(p: number): number {
  return B23[3]! + Math.sqrt((p / 1e6 - B23[4]!) / B23[2]!);
}

/** Saturation pressure at 623.15 K [Pa]: the top of the region 1/2 saturation line, where region 3 begins. */
export const P_SAT_623 = psat(623.15);
/** Saturation pressure at 273.15 K [Pa]: the lowest pressure of the saturation line. */
export const P_SAT_MIN = psat(273.15);
