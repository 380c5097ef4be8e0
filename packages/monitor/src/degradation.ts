/**
 * Degradation rate: the Theil-Sen slope of daily drift means and the date the alarm band is reached.
 *
 * Slope: the median of all pairwise slopes (y_j - y_i)/(x_j - x_i), x_i != x_j (Theil 1950;
 * Sen 1968, J. Am. Stat. Assoc. 63, 1379); intercept: median of y_i - b x_i. Robust to a few bad
 * days (breakdown point about 29 %).
 * Confidence interval by Sen's method, as set out in Gilbert (1987), Statistical Methods for
 * Environmental Pollution Monitoring, section 16.5: with N' pairwise slopes sorted ascending and
 * Var(S) the variance of Kendall's S statistic,
 *   Var(S) = [n(n-1)(2n+5) - sum_p t_p(t_p-1)(2t_p+5)] / 18   (t_p = size of the p-th group of tied y),
 *   C = z_(1-alpha/2) sqrt(Var(S)),  M1 = (N' - C)/2,  M2 = (N' + C)/2,
 * the lower limit is the M1-th and the upper limit the (M2 + 1)-th slope (1-based, rounded to the
 * nearest integer). When an index falls outside 1..N' the limit is infinite: too few points to
 * bound the slope at this confidence. Ties in x are not corrected for (daily points have none).
 *
 * Rates are given in points of efficiency per month of 30.44 days.
 */
import { LengthMismatchError, MonitorBadInputError, TooFewPointsError } from './errors.js';
import { MS_PER_MONTH, medianInPlace, normalQuantile } from './stats.js';

export interface TheilSenResult {
  /** Median pairwise slope [y unit per x unit]. */
  readonly slope: number;
  /** Median of y - slope x (x as given). */
  readonly intercept: number;
  /** Confidence limits of the slope (Sen's method); may be infinite for very few points. */
  readonly slopeLow: number;
  readonly slopeHigh: number;
  /** Confidence level used, e.g. 0.95. */
  readonly confidence: number;
  readonly n: number;
  /** Kendall's S (number of increasing minus decreasing pairs) and its variance (ties corrected). */
  readonly kendallS: number;
  readonly varS: number;
}

/** Theil-Sen slope with Sen's confidence interval. NaN pairs are skipped; needs 2 points. */
export function theilSen(x: ArrayLike<number>, y: ArrayLike<number>, confidence = 0.95): TheilSenResult {
  if (x.length !== y.length) throw new LengthMismatchError('theilSen y', x.length, y.length);
  if (!(confidence > 0 && confidence < 1))
    throw new MonitorBadInputError('confidence', confidence, 'must lie in (0, 1)');
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
  const n = xs.length;
  if (n < 2) throw new TooFewPointsError('Theil-Sen slope', n, 2);
  const x0 = xs[0] as number; // shift x so that epoch milliseconds keep their precision
  const slopes = new Float64Array((n * (n - 1)) / 2);
  let m = 0;
  let s = 0;
  for (let i = 0; i < n; i++) {
    const xi = (xs[i] as number) - x0;
    const yi = ys[i] as number;
    for (let j = i + 1; j < n; j++) {
      const dy = (ys[j] as number) - yi;
      const dx = (xs[j] as number) - x0 - xi;
      // Kendall's S counts pairs ordered by x; a pair tied in x counts for nothing.
      if (dx !== 0) {
        slopes[m++] = dy / dx;
        s += Math.sign(dy) * Math.sign(dx);
      }
    }
  }
  if (m === 0) throw new TooFewPointsError('Theil-Sen slope (distinct x)', 1, 2);
  const sorted = slopes.subarray(0, m).sort();
  const slope =
    m % 2 === 1
      ? (sorted[m >> 1] as number)
      : ((sorted[(m >> 1) - 1] as number) + (sorted[m >> 1] as number)) / 2;
  const resid = xs.map((xi, i) => (ys[i] as number) - slope * (xi - x0));
  const intercept = medianInPlace(resid) - slope * x0;

  // Tie groups in y for the variance of S.
  const ySorted = Float64Array.from(ys).sort();
  let tieSum = 0;
  for (let i = 0; i < n; ) {
    let j = i + 1;
    while (j < n && ySorted[j] === ySorted[i]) j++;
    const tp = j - i;
    if (tp > 1) tieSum += tp * (tp - 1) * (2 * tp + 5);
    i = j;
  }
  const varS = (n * (n - 1) * (2 * n + 5) - tieSum) / 18;
  const c = normalQuantile(1 - (1 - confidence) / 2) * Math.sqrt(varS);
  const m1 = Math.round((m - c) / 2); // 1-based rank of the lower limit
  const m2 = Math.round((m + c) / 2) + 1; // 1-based rank of the upper limit
  const slopeLow = m1 >= 1 ? (sorted[m1 - 1] as number) : Number.NEGATIVE_INFINITY;
  const slopeHigh = m2 <= m ? (sorted[m2 - 1] as number) : Number.POSITIVE_INFINITY;
  return { slope, intercept, slopeLow, slopeHigh, confidence, n, kendallS: s, varS };
}

export type Forecast =
  | {
      readonly status: 'forecast';
      /** When the fitted line reaches the alarm level [ms]. */
      readonly atMs: number;
      /** Earliest and latest dates from the slope's confidence limits [ms]. */
      readonly earliestMs: number;
      readonly latestMs: number;
    }
  | { readonly status: 'reached'; readonly atMs: number; readonly reason: string }
  | {
      readonly status: 'none';
      readonly reason: 'too-few-points' | 'slope-not-negative' | 'interval-spans-zero';
      readonly text: string;
    };

export interface Degradation {
  /** Theil-Sen rate [%-points per month of 30.44 days], negative = loss; NaN with too few points. */
  readonly ratePtsPerMonth: number;
  readonly rateLowPtsPerMonth: number;
  readonly rateHighPtsPerMonth: number;
  readonly confidence: number;
  /** Days used (finite drift means). */
  readonly n: number;
  /** Fitted drift at the last day [%-points]. */
  readonly currentPts: number;
  readonly forecast: Forecast;
}

export interface DegradationOptions {
  /** Alarm level of the drift [%-points], negative (a loss), e.g. -3. */
  readonly alarmPts: number;
  /** Confidence level of the interval; default 0.95. */
  readonly confidence?: number;
  /** Fewest days for a rate; default 7 (common practice, no source). */
  readonly minPoints?: number;
}

/**
 * Degradation rate of daily drift means (t = day mid-points [ms], drift [%-points]) and the
 * forecast date of reaching `alarmPts`. No forecast unless the slope is negative and its whole
 * confidence interval is below zero; the output says which.
 */
export function degradation(
  tMs: ArrayLike<number>,
  driftPts: ArrayLike<number>,
  options: DegradationOptions,
): Degradation {
  const confidence = options.confidence ?? 0.95;
  const minPoints = options.minPoints ?? 7;
  const alarm = options.alarmPts;
  if (!(alarm < 0))
    throw new MonitorBadInputError('alarmPts', alarm, 'must be negative (a loss of efficiency)');
  if (tMs.length !== driftPts.length) throw new LengthMismatchError('driftPts', tMs.length, driftPts.length);
  let n = 0;
  let tLast = Number.NEGATIVE_INFINITY;
  for (let i = 0; i < tMs.length; i++)
    if (Number.isFinite(tMs[i] as number) && Number.isFinite(driftPts[i] as number)) {
      n++;
      tLast = Math.max(tLast, tMs[i] as number);
    }
  if (n < Math.max(2, minPoints))
    return {
      ratePtsPerMonth: Number.NaN,
      rateLowPtsPerMonth: Number.NaN,
      rateHighPtsPerMonth: Number.NaN,
      confidence,
      n,
      currentPts: Number.NaN,
      forecast: {
        status: 'none',
        reason: 'too-few-points',
        text: `${n} days with data; at least ${Math.max(2, minPoints)} are needed for a rate.`,
      },
    };
  const ts = theilSen(tMs, driftPts, confidence);
  const current = ts.intercept + ts.slope * tLast;
  const base = {
    ratePtsPerMonth: ts.slope * MS_PER_MONTH,
    rateLowPtsPerMonth: ts.slopeLow * MS_PER_MONTH,
    rateHighPtsPerMonth: ts.slopeHigh * MS_PER_MONTH,
    confidence,
    n,
    currentPts: current,
  };
  if (current <= alarm) {
    return {
      ...base,
      forecast: {
        status: 'reached',
        atMs: ts.slope < 0 ? (alarm - ts.intercept) / ts.slope : tLast,
        reason: `the fitted drift (${current.toFixed(2)} points) is already at or beyond the alarm level (${alarm} points).`,
      },
    };
  }
  if (!(ts.slope < 0))
    return {
      ...base,
      forecast: {
        status: 'none',
        reason: 'slope-not-negative',
        text: 'No loss trend: the slope is not negative.',
      },
    };
  if (!(ts.slopeHigh < 0))
    return {
      ...base,
      forecast: {
        status: 'none',
        reason: 'interval-spans-zero',
        text: `The ${Math.round(confidence * 100)} % interval of the slope includes zero: no significant trend, no forecast.`,
      },
    };
  // Each limit line passes through the median residual for its own slope (Sen's intercept).
  const at = (b: number): number => {
    const resid: number[] = [];
    for (let i = 0; i < tMs.length; i++) {
      const t = tMs[i] as number;
      const y = driftPts[i] as number;
      if (Number.isFinite(t) && Number.isFinite(y)) resid.push(y - b * (t - tLast));
    }
    const a = medianInPlace(resid); // line value at tLast
    return tLast + (alarm - a) / b;
  };
  const atMs = tLast + (alarm - current) / ts.slope;
  const earliest = Number.isFinite(ts.slopeLow) ? at(ts.slopeLow) : tLast;
  return {
    ...base,
    forecast: { status: 'forecast', atMs, earliestMs: earliest, latestMs: at(ts.slopeHigh) },
  };
}
