import { BadInputError } from '../errors.js';

/** Outputs a model may return: a vector, or named scalars (an undefined or NaN entry has no uncertainty). */
export type ModelOutput = Float64Array | Readonly<Record<string, number | undefined>>;

export interface GumResult<Y extends ModelOutput> {
  /** The model at the input estimates. */
  readonly value: Y;
  /** Combined standard uncertainty of each output, in the output's own unit. */
  readonly uncertainty: Y extends Float64Array ? Float64Array : Partial<Record<keyof Y & string, number>>;
}

function check(x: ArrayLike<number>, u: ArrayLike<number>): void {
  if (x.length !== u.length) {
    throw new BadInputError(
      'uncertainty',
      `needs one uncertainty per input: ${x.length} inputs, ${u.length} uncertainties`,
    );
  }
  for (let i = 0; i < u.length; i++) {
    const ui = u[i]!;
    if (!(ui >= 0) || !Number.isFinite(ui)) {
      throw new BadInputError(`uncertainty[${i}]`, `must be a finite number >= 0, got ${ui}`);
    }
  }
}

/**
 * First-order propagation of uncorrelated standard uncertainties, GUM (JCGM 100:2008) eq. 10:
 * u_c^2(y) = sum_i (df/dx_i)^2 u^2(x_i). The sensitivity coefficients come from central
 * differences with the step equal to u(x_i) (GUM 5.1.3 note 2 allows this numerical form); when
 * the model fails on one side (a range limit) a one-sided difference is taken; inputs with
 * u = 0 cost nothing.
 */
export function propagateGum<Y extends ModelOutput>(
  f: (x: Float64Array) => Y,
  x: ArrayLike<number>,
  u: ArrayLike<number>,
): GumResult<Y> {
  check(x, u);
  const n = x.length;
  const xv = Float64Array.from(x);
  const value = f(Float64Array.from(xv));
  if (value instanceof Float64Array) {
    // Copied: f may reuse its output buffer between calls.
    return propagateVector(
      f as (x: Float64Array) => Float64Array,
      xv,
      u,
      Float64Array.from(value),
    ) as GumResult<Y>;
  }
  const record = value as Readonly<Record<string, number | undefined>>;
  const keys = Object.keys(record).filter((k) => Number.isFinite(record[k]));
  const sums = new Float64Array(keys.length);
  for (let i = 0; i < n; i++) {
    const ui = u[i]!;
    if (ui === 0) continue;
    const d = difference(f, xv, i, ui, value) as Readonly<Record<string, number | undefined>> | undefined;
    for (let j = 0; j < keys.length; j++) {
      const dj = d?.[keys[j]!];
      // A missing output on a perturbed side means the derivative is unknown: NaN, dropped below.
      sums[j]! += dj === undefined ? Number.NaN : dj * dj;
    }
  }
  const out: Record<string, number> = {};
  for (let j = 0; j < keys.length; j++) {
    const s = sums[j]!;
    if (Number.isFinite(s)) out[keys[j]!] = Math.sqrt(s);
  }
  return { value, uncertainty: out } as GumResult<Y>;
}

/**
 * The vector form, written for speed (the machine wrapper runs it per sample): f receives a
 * scratch array it must not keep, and a NaN output (no value) gives a NaN uncertainty.
 */
function propagateVector(
  f: (x: Float64Array) => Float64Array,
  x: Float64Array,
  u: ArrayLike<number>,
  value: Float64Array,
): GumResult<Float64Array> {
  const m = value.length;
  const sum = new Float64Array(m);
  const scratch = Float64Array.from(x);
  const plusBuffer = new Float64Array(m);
  for (let i = 0; i < x.length; i++) {
    const ui = u[i]!;
    if (ui === 0) continue;
    const xi = x[i]!;
    scratch[i] = xi + ui;
    let plus: Float64Array | undefined;
    try {
      // Copied out: f may reuse its output buffer between calls.
      plusBuffer.set(f(scratch));
      plus = plusBuffer;
    } catch {
      plus = undefined;
    }
    scratch[i] = xi - ui;
    let minus: Float64Array | undefined;
    try {
      minus = f(scratch);
    } catch {
      minus = undefined;
    }
    scratch[i] = xi;
    if (plus === undefined && minus === undefined) {
      sum.fill(Number.NaN);
      continue;
    }
    const hi = plus ?? value;
    const lo = minus ?? value;
    const scale = plus !== undefined && minus !== undefined ? 0.5 : 1;
    for (let j = 0; j < m; j++) {
      const d = (hi[j]! - lo[j]!) * scale;
      sum[j]! += d * d;
    }
  }
  for (let j = 0; j < m; j++) sum[j] = Math.sqrt(sum[j]!);
  return { value, uncertainty: sum };
}

/**
 * u_i times the derivative of each output with respect to x_i: (f(x+u) - f(x-u)) / 2, or one-sided
 * when one side throws. Undefined when both sides throw.
 */
function difference(
  f: (x: Float64Array) => ModelOutput,
  x: Float64Array,
  i: number,
  ui: number,
  base: ModelOutput,
): Readonly<Record<string, number | undefined>> | undefined {
  const xi = x[i]!;
  let plus: ModelOutput | undefined;
  let minus: ModelOutput | undefined;
  x[i] = xi + ui;
  try {
    plus = f(Float64Array.from(x));
  } catch {
    plus = undefined;
  }
  x[i] = xi - ui;
  try {
    minus = f(Float64Array.from(x));
  } catch {
    minus = undefined;
  }
  x[i] = xi;
  const hi = plus ?? base;
  const lo = minus ?? base;
  if (plus === undefined && minus === undefined) return undefined;
  const scale = plus !== undefined && minus !== undefined ? 0.5 : 1;
  const h = hi as Readonly<Record<string, number | undefined>>;
  const l = lo as Readonly<Record<string, number | undefined>>;
  const d: Record<string, number | undefined> = {};
  for (const k of Object.keys(base)) {
    const a = h[k];
    const b = l[k];
    d[k] = a === undefined || b === undefined ? undefined : (a - b) * scale;
  }
  return d;
}
