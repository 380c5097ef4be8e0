/**
 * Baseline: the machine's expected efficiency as a function of its operating point (load
 * fraction, mass flow or pressure ratio), fitted on a reference period, and the drift from it.
 *
 * Two forms:
 * - a least-squares polynomial of degree 1..3 (ordinary least squares on x scaled to [-1, 1] for
 *   conditioning; covariance of the coefficients s^2 (Z^T Z)^-1, e.g. Draper and Smith, Applied
 *   Regression Analysis, 3rd ed., ch. 2 and 5);
 * - binned medians of efficiency, interpolated linearly between the bins' median operating points,
 *   robust to outliers; the standard uncertainty of a bin median is taken as
 *   sqrt(pi/2) s / sqrt(n), the large-sample value for normal data (Kendall and Stuart).
 * Outside the fitted operating range the value is still returned, with `outOfRange` set.
 *
 * Efficiencies are fractions [-]; drift is in points of efficiency [%-points] (1 point = 0.01),
 * negative = loss.
 */
import { LengthMismatchError, MonitorBadInputError, SingularFitError, TooFewPointsError } from './errors.js';
import { medianInPlace } from './stats.js';

export interface PolynomialBaseline {
  readonly kind: 'polynomial';
  /** fitBaseline fits 1 to 3; a stored row without its fitted model may hold more (services/jobs). */
  readonly degree: number;
  /** Coefficients in the raw operating point, ascending powers: eta = sum c_k x^k [-]. */
  readonly coefficients: readonly number[];
  /** Coefficients in the scaled variable z = (x - xCenter) / xHalfRange, ascending powers. */
  readonly scaledCoefficients: readonly number[];
  readonly xCenter: number;
  readonly xHalfRange: number;
  /** Covariance of the scaled coefficients, row-major (degree + 1)^2. */
  readonly covariance: readonly number[];
  /** Residual standard deviation [-], divisor n - (degree + 1). */
  readonly residualStd: number;
  readonly r2: number;
  readonly n: number;
  /** Operating-point range covered by the reference data. */
  readonly xMin: number;
  readonly xMax: number;
}

export interface BinnedBaseline {
  readonly kind: 'binned';
  /** Per kept bin: median operating point, median efficiency [-], its standard uncertainty, count. */
  readonly bins: readonly {
    readonly x: number;
    readonly median: number;
    readonly u: number;
    readonly n: number;
  }[];
  readonly residualStd: number;
  readonly r2: number;
  readonly n: number;
  readonly xMin: number;
  readonly xMax: number;
}

export type Baseline = PolynomialBaseline | BinnedBaseline;

export type BaselineFitOptions =
  | {
      readonly method: 'polynomial';
      readonly degree: 1 | 2 | 3;
      /** Fewest points accepted; default 3 x (degree + 1) (common practice, no source), never fewer than degree + 2. */
      readonly minPoints?: number;
    }
  | {
      readonly method: 'binned';
      /** Bin edges (ascending); or `bins` equal-width bins over the data range (default 10). */
      readonly edges?: readonly number[];
      readonly bins?: number;
      /** Bins with fewer points are dropped; default 5. */
      readonly minPerBin?: number;
    };

export interface BaselineValue {
  /** Baseline efficiency at x [-]. */
  readonly efficiency: number;
  /** Standard uncertainty of the baseline (of the fitted mean, not of a single new point) [-]. */
  readonly u: number;
  /** x lies outside [xMin, xMax]: the value is an extrapolation. */
  readonly outOfRange: boolean;
}

/** Fit a baseline to reference points (x = operating point, y = efficiency [-]). NaN pairs are skipped. */
export function fitBaseline(
  x: ArrayLike<number>,
  y: ArrayLike<number>,
  options: BaselineFitOptions,
): Baseline {
  if (x.length !== y.length) throw new LengthMismatchError('baseline y', x.length, y.length);
  const xs: number[] = [];
  const ys: number[] = [];
  for (let i = 0; i < x.length; i++) {
    const xi = x[i] as number;
    const yi = y[i] as number;
    if (Number.isFinite(xi) && Number.isFinite(yi)) {
      xs.push(xi);
      ys.push(yi);
    }
  }
  return options.method === 'polynomial' ? fitPolynomial(xs, ys, options) : fitBinned(xs, ys, options);
}

function fitPolynomial(
  xs: number[],
  ys: number[],
  options: { degree: 1 | 2 | 3; minPoints?: number },
): PolynomialBaseline {
  const d = options.degree;
  if (!(d === 1 || d === 2 || d === 3)) throw new MonitorBadInputError('degree', d, 'must be 1, 2 or 3');
  const p = d + 1;
  const need = Math.max(options.minPoints ?? 3 * p, d + 2);
  const n = xs.length;
  if (n < need) throw new TooFewPointsError(`baseline polynomial of degree ${d}`, n, need);
  const distinct = new Set(xs).size;
  if (distinct < p) throw new SingularFitError('baseline polynomial', distinct, d);
  let xMin = Number.POSITIVE_INFINITY;
  let xMax = Number.NEGATIVE_INFINITY;
  for (const v of xs) {
    if (v < xMin) xMin = v;
    if (v > xMax) xMax = v;
  }
  const c = (xMin + xMax) / 2;
  const h = (xMax - xMin) / 2;
  // Normal equations in the scaled variable (|z| <= 1 keeps Z^T Z well conditioned for d <= 3).
  const a = new Float64Array(p * p);
  const b = new Float64Array(p);
  const pow = new Float64Array(p);
  for (let i = 0; i < n; i++) {
    const z = ((xs[i] as number) - c) / h;
    pow[0] = 1;
    for (let k = 1; k < p; k++) pow[k] = (pow[k - 1] as number) * z;
    for (let r = 0; r < p; r++) {
      b[r] = (b[r] as number) + (pow[r] as number) * (ys[i] as number);
      for (let s = 0; s < p; s++)
        a[r * p + s] = (a[r * p + s] as number) + (pow[r] as number) * (pow[s] as number);
    }
  }
  const inv = invert(a, p);
  if (inv === undefined) throw new SingularFitError('baseline polynomial', distinct, d);
  const beta = new Array<number>(p).fill(0);
  for (let r = 0; r < p; r++) {
    let s = 0;
    for (let k = 0; k < p; k++) s += (inv[r * p + k] as number) * (b[k] as number);
    beta[r] = s;
  }
  let sse = 0;
  let ym = 0;
  for (const v of ys) ym += v;
  ym /= n;
  let sst = 0;
  for (let i = 0; i < n; i++) {
    const e = (ys[i] as number) - horner(beta, ((xs[i] as number) - c) / h);
    sse += e * e;
    sst += ((ys[i] as number) - ym) ** 2;
  }
  const s2 = sse / (n - p);
  const covariance = Array.from(inv, (v) => v * s2);
  return {
    kind: 'polynomial',
    degree: d,
    coefficients: unscale(beta, c, h),
    scaledCoefficients: beta,
    xCenter: c,
    xHalfRange: h,
    covariance,
    residualStd: Math.sqrt(s2),
    r2: sst > 0 ? 1 - sse / sst : Number.NaN,
    n,
    xMin,
    xMax,
  };
}

function fitBinned(
  xs: number[],
  ys: number[],
  options: { edges?: readonly number[]; bins?: number; minPerBin?: number },
): BinnedBaseline {
  const n = xs.length;
  const minPerBin = options.minPerBin ?? 5;
  if (n < minPerBin) throw new TooFewPointsError('baseline binned medians', n, minPerBin);
  let xMin = Number.POSITIVE_INFINITY;
  let xMax = Number.NEGATIVE_INFINITY;
  for (const v of xs) {
    if (v < xMin) xMin = v;
    if (v > xMax) xMax = v;
  }
  let edges = options.edges;
  if (edges === undefined) {
    const k = options.bins ?? 10;
    if (!(Number.isInteger(k) && k >= 1)) throw new MonitorBadInputError('bins', k, 'integer >= 1');
    const w = (xMax - xMin) / k;
    edges = Array.from({ length: k + 1 }, (_, i) => (i === k ? xMax : xMin + i * w));
  }
  for (let i = 1; i < edges.length; i++)
    if (!((edges[i] as number) > (edges[i - 1] as number)))
      throw new MonitorBadInputError('edges', edges.join(','), 'must be strictly ascending');
  const groupsX: number[][] = Array.from({ length: edges.length - 1 }, () => []);
  const groupsY: number[][] = Array.from({ length: edges.length - 1 }, () => []);
  const last = edges.length - 2;
  for (let i = 0; i < n; i++) {
    const xi = xs[i] as number;
    if (xi < (edges[0] as number) || xi > (edges[last + 1] as number)) continue;
    let j = 0;
    while (j < last && xi >= (edges[j + 1] as number)) j++; // the last bin is closed on the right
    groupsX[j]?.push(xi);
    groupsY[j]?.push(ys[i] as number);
  }
  const bins: { x: number; median: number; u: number; n: number }[] = [];
  for (let j = 0; j < groupsX.length; j++) {
    const gy = groupsY[j] as number[];
    if (gy.length < minPerBin) continue;
    const m = gy.length;
    let mean = 0;
    for (const v of gy) mean += v;
    mean /= m;
    let ss = 0;
    for (const v of gy) ss += (v - mean) ** 2;
    const s = m > 1 ? Math.sqrt(ss / (m - 1)) : Number.NaN;
    bins.push({
      x: medianInPlace([...(groupsX[j] as number[])]),
      median: medianInPlace([...gy]),
      u: Math.sqrt(Math.PI / 2) * (s / Math.sqrt(m)),
      n: m,
    });
  }
  if (bins.length === 0)
    throw new TooFewPointsError(`baseline binned medians (no bin with ${minPerBin} points)`, 0, 1);
  const partial: BinnedBaseline = { kind: 'binned', bins, residualStd: 0, r2: 0, n, xMin, xMax };
  let sse = 0;
  let ym = 0;
  for (const v of ys) ym += v;
  ym /= n;
  let sst = 0;
  for (let i = 0; i < n; i++) {
    const e = (ys[i] as number) - evaluateBaseline(partial, xs[i] as number).efficiency;
    sse += e * e;
    sst += ((ys[i] as number) - ym) ** 2;
  }
  return {
    ...partial,
    residualStd: Math.sqrt(sse / Math.max(1, n - bins.length)),
    r2: sst > 0 ? 1 - sse / sst : Number.NaN,
  };
}

/** Baseline efficiency at operating point x, its uncertainty, and whether x is outside the fitted range. */
export function evaluateBaseline(baseline: Baseline, x: number): BaselineValue {
  if (!Number.isFinite(x)) throw new MonitorBadInputError('operating point x', x, 'must be finite');
  const outOfRange = x < baseline.xMin || x > baseline.xMax;
  if (baseline.kind === 'polynomial') {
    const p = baseline.degree + 1;
    const z = (x - baseline.xCenter) / baseline.xHalfRange;
    const g = new Array<number>(p);
    g[0] = 1;
    for (let k = 1; k < p; k++) g[k] = (g[k - 1] as number) * z;
    let v = 0;
    for (let r = 0; r < p; r++)
      for (let s = 0; s < p; s++)
        v += (g[r] as number) * (baseline.covariance[r * p + s] as number) * (g[s] as number);
    return { efficiency: horner(baseline.scaledCoefficients, z), u: Math.sqrt(Math.max(0, v)), outOfRange };
  }
  const bins = baseline.bins;
  const first = bins[0]!;
  const lastBin = bins[bins.length - 1]!;
  if (x <= first.x) return { efficiency: first.median, u: first.u, outOfRange };
  if (x >= lastBin.x) return { efficiency: lastBin.median, u: lastBin.u, outOfRange };
  let j = 0;
  while (x > bins[j + 1]!.x) j++;
  const a = bins[j]!;
  const b = bins[j + 1]!;
  const w = (x - a.x) / (b.x - a.x);
  // Independent bins: u^2 = (1-w)^2 u_a^2 + w^2 u_b^2 (GUM, uncorrelated inputs).
  return {
    efficiency: (1 - w) * a.median + w * b.median,
    u: Math.sqrt((1 - w) ** 2 * a.u ** 2 + w ** 2 * b.u ** 2),
    outOfRange,
  };
}

export interface Drift {
  /** Efficiency minus baseline at the same operating point [%-points], negative = loss. */
  readonly driftPts: number;
  /** Standard uncertainty of the drift [%-points]: u_drift^2 = u_eff^2 + u_baseline^2. */
  readonly uDriftPts: number;
  readonly baselineEfficiency: number;
  readonly uBaseline: number;
  /** The operating point lies outside the baseline's range: the drift rests on an extrapolation. */
  readonly outOfRange: boolean;
}

/**
 * Drift of a (rolling) efficiency from the baseline at operating point x. The efficiency's and the
 * baseline's uncertainties are taken as independent (different periods, GUM uncorrelated sum).
 */
export function computeDrift(efficiency: number, uEfficiency: number, baseline: Baseline, x: number): Drift {
  const b = evaluateBaseline(baseline, x);
  return {
    driftPts: 100 * (efficiency - b.efficiency),
    uDriftPts: 100 * Math.sqrt(uEfficiency * uEfficiency + b.u * b.u),
    baselineEfficiency: b.efficiency,
    uBaseline: b.u,
    outOfRange: b.outOfRange,
  };
}

function horner(c: readonly number[], z: number): number {
  let v = 0;
  for (let k = c.length - 1; k >= 0; k--) v = v * z + (c[k] as number);
  return v;
}

/** Expand sum b_k ((x - c)/h)^k into ascending powers of x. */
function unscale(beta: readonly number[], c: number, h: number): number[] {
  const p = beta.length;
  const out = new Array<number>(p).fill(0);
  // term = ((x - c)/h)^k as coefficients in x, built up by repeated multiplication.
  let term = [1];
  for (let k = 0; k < p; k++) {
    for (let j = 0; j < term.length; j++)
      out[j] = (out[j] as number) + (beta[k] as number) * (term[j] as number);
    const next = new Array<number>(term.length + 1).fill(0);
    for (let j = 0; j < term.length; j++) {
      next[j] = (next[j] as number) - ((term[j] as number) * c) / h;
      next[j + 1] = (next[j + 1] as number) + (term[j] as number) / h;
    }
    term = next;
  }
  return out;
}

/** Inverse of a small symmetric positive matrix by Gauss-Jordan with partial pivoting; undefined if singular. */
function invert(a: Float64Array, p: number): Float64Array | undefined {
  const m = Float64Array.from(a);
  const inv = new Float64Array(p * p);
  for (let i = 0; i < p; i++) inv[i * p + i] = 1;
  let scale = 0;
  for (const v of a) scale = Math.max(scale, Math.abs(v));
  for (let col = 0; col < p; col++) {
    let piv = col;
    for (let r = col + 1; r < p; r++)
      if (Math.abs(m[r * p + col] as number) > Math.abs(m[piv * p + col] as number)) piv = r;
    const pv = m[piv * p + col] as number;
    if (Math.abs(pv) <= 1e-12 * scale) return undefined;
    if (piv !== col)
      for (let k = 0; k < p; k++) {
        const t1 = m[col * p + k] as number;
        m[col * p + k] = m[piv * p + k] as number;
        m[piv * p + k] = t1;
        const t2 = inv[col * p + k] as number;
        inv[col * p + k] = inv[piv * p + k] as number;
        inv[piv * p + k] = t2;
      }
    for (let k = 0; k < p; k++) {
      m[col * p + k] = (m[col * p + k] as number) / pv;
      inv[col * p + k] = (inv[col * p + k] as number) / pv;
    }
    for (let r = 0; r < p; r++) {
      if (r === col) continue;
      const f = m[r * p + col] as number;
      if (f === 0) continue;
      for (let k = 0; k < p; k++) {
        m[r * p + k] = (m[r * p + k] as number) - f * (m[col * p + k] as number);
        inv[r * p + k] = (inv[r * p + k] as number) - f * (inv[col * p + k] as number);
      }
    }
  }
  return inv;
}
