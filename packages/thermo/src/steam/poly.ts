/**
 * Sums of the form sum_k n_k x^I_k y^J_k with integer exponents, the shape of every IF97
 * basic and backward equation. Powers come from tables filled by repeated multiplication
 * (no Math.pow in the loop), into module-level scratch buffers so a call allocates nothing.
 */

/** A coefficient table with precomputed offsets into the power buffers. */
export interface PolyTable {
  readonly size: number;
  readonly I: Int32Array;
  readonly J: Int32Array;
  readonly n: Float64Array;
  /** n_k J_k and n_k J_k (J_k - 1), precomputed for the tau derivatives. */
  readonly nJ: Float64Array;
  readonly nJJ: Float64Array;
  readonly iMin: number;
  readonly iMax: number;
  readonly jMin: number;
  readonly jMax: number;
}

/** Builds a table from the published exponents I, J and coefficients n (equal lengths). */
export function polyTable(I: readonly number[], J: readonly number[], n: readonly number[]): PolyTable {
  if (I.length !== n.length || J.length !== n.length) {
    throw new RangeError(`coefficient table lengths differ: I ${I.length}, J ${J.length}, n ${n.length}`);
  }
  for (const e of [...I, ...J]) {
    if (!Number.isInteger(e)) throw new RangeError(`exponent ${e} is not an integer`);
  }
  // Two below the smallest exponent so first and second derivatives index safely.
  const iMin = Math.min(...I) - 2;
  const jMin = Math.min(...J) - 2;
  return {
    size: n.length,
    I: Int32Array.from(I),
    J: Int32Array.from(J),
    n: Float64Array.from(n),
    nJ: Float64Array.from(n, (v, k) => v * J[k]!),
    nJJ: Float64Array.from(n, (v, k) => v * J[k]! * (J[k]! - 1)),
    iMin,
    iMax: Math.max(...I),
    jMin,
    jMax: Math.max(...J),
  };
}

const XP = new Float64Array(128);
const YP = new Float64Array(128);

/** buf[k - kMin] = x^k for k = kMin..kMax (kMin may be negative). */
function fillPowers(buf: Float64Array, x: number, kMin: number, kMax: number): void {
  const zero = -kMin;
  buf[zero] = 1;
  let p = 1;
  for (let k = 1; k <= kMax; k++) {
    p *= x;
    buf[zero + k] = p;
  }
  if (kMin < 0) {
    const inv = 1 / x;
    p = 1;
    for (let k = -1; k >= kMin; k--) {
      p *= inv;
      buf[zero + k] = p;
    }
  }
}

/** sum_k n_k x^I_k y^J_k. */
export function poly2(t: PolyTable, x: number, y: number): number {
  fillPowers(XP, x, t.iMin, t.iMax);
  fillPowers(YP, y, t.jMin, t.jMax);
  const { I, J, n, iMin, jMin, size } = t;
  let sum = 0;
  for (let k = 0; k < size; k++) {
    sum += n[k]! * XP[I[k]! - iMin]! * YP[J[k]! - jMin]!;
  }
  return sum;
}

/**
 * The sum and its derivatives, written into out:
 * [f, f_x, f_xx, f_y, f_yy, f_xy] with f = sum_k n_k x^I_k y^J_k.
 */
export function poly2Derivatives(t: PolyTable, x: number, y: number, out: Float64Array): void {
  fillPowers(XP, x, t.iMin, t.iMax);
  fillPowers(YP, y, t.jMin, t.jMax);
  const { I, J, n, iMin, jMin, size } = t;
  let f = 0;
  let fx = 0;
  let fxx = 0;
  let fy = 0;
  let fyy = 0;
  let fxy = 0;
  for (let k = 0; k < size; k++) {
    const i = I[k]!;
    const j = J[k]!;
    const nk = n[k]!;
    const xi = i - iMin;
    const yj = j - jMin;
    const a = nk * XP[xi]!;
    const b = nk * i * XP[xi - 1]!;
    f += a * YP[yj]!;
    fx += b * YP[yj]!;
    fxx += nk * i * (i - 1) * XP[xi - 2]! * YP[yj]!;
    fy += a * j * YP[yj - 1]!;
    fyy += a * j * (j - 1) * YP[yj - 2]!;
    fxy += b * j * YP[yj - 1]!;
  }
  out[0] = f;
  out[1] = fx;
  out[2] = fxx;
  out[3] = fy;
  out[4] = fyy;
  out[5] = fxy;
}

/**
 * The sum and its y-derivatives only, written into out: [f, f_y, f_yy]. The fast path for
 * h, s and cp, which need no pressure derivative.
 */
export function poly2YDerivatives(t: PolyTable, x: number, y: number, out: Float64Array): void {
  fillPowers(XP, x, t.iMin, t.iMax);
  fillPowers(YP, y, t.jMin, t.jMax);
  const { I, J, n, nJ, nJJ, iMin, jMin, size } = t;
  let f = 0;
  let fy = 0;
  let fyy = 0;
  for (let k = 0; k < size; k++) {
    const yj = J[k]! - jMin;
    const x = XP[I[k]! - iMin]!;
    f += n[k]! * x * YP[yj]!;
    fy += nJ[k]! * x * YP[yj - 1]!;
    fyy += nJJ[k]! * x * YP[yj - 2]!;
  }
  out[0] = f;
  out[1] = fy;
  out[2] = fyy;
}
