/**
 * Small statistics helpers shared by the monitoring modules. Pure, allocation-light.
 */

/** Median of the finite values of `a` (NaN when there are none). Does not modify `a`. */
export function median(a: ArrayLike<number>): number {
  const v: number[] = [];
  for (let i = 0; i < a.length; i++) {
    const x = a[i] as number;
    if (Number.isFinite(x)) v.push(x);
  }
  return medianInPlace(v);
}

/** Median of `v` (all finite); sorts `v` in place. NaN for an empty array. */
export function medianInPlace(v: number[] | Float64Array): number {
  const n = v.length;
  if (n === 0) return Number.NaN;
  if (v instanceof Float64Array) v.sort();
  else v.sort((x, y) => x - y);
  const h = n >> 1;
  return n % 2 === 1 ? (v[h] as number) : ((v[h - 1] as number) + (v[h] as number)) / 2;
}

/**
 * Standard normal cumulative distribution Phi(z). erfc by the Chebyshev-fitted form
 * erfc(x) ~ t exp(-x^2 + P(t)), t = 1/(1 + x/2), of Numerical Recipes in C, 2nd ed., section 6.2
 * (fractional error below 1.2e-7 everywhere), ample for confidence-interval quantiles.
 */
export function normalCdf(z: number): number {
  const x = Math.abs(z) / Math.SQRT2;
  const t = 1 / (1 + 0.5 * x);
  const y =
    t *
    Math.exp(
      -x * x -
        1.26551223 +
        t *
          (1.00002368 +
            t *
              (0.37409196 +
                t *
                  (0.09678418 +
                    t *
                      (-0.18628806 +
                        t *
                          (0.27886807 +
                            t * (-1.13520398 + t * (1.48851587 + t * (-0.82215223 + t * 0.17087277)))))))),
    );
  // y = erfc(|z|/sqrt 2); Phi(z) = 1 - erfc/2 for z >= 0.
  return z >= 0 ? 1 - y / 2 : y / 2;
}

/** Standard normal quantile: z with Phi(z) = p, 0 < p < 1, by bisection on normalCdf (|error| < 1e-9 in z). */
export function normalQuantile(p: number): number {
  if (!(p > 0 && p < 1)) return Number.NaN;
  let lo = -40;
  let hi = 40;
  for (let k = 0; k < 200 && hi - lo > 1e-10; k++) {
    const mid = (lo + hi) / 2;
    if (normalCdf(mid) < p) lo = mid;
    else hi = mid;
  }
  return (lo + hi) / 2;
}

/** Milliseconds in one mean month (365.25 / 12 = 30.4375, used as 30.44 days by the brief). */
export const MS_PER_MONTH = 30.44 * 86_400_000;
/** Milliseconds in one day. */
export const MS_PER_DAY = 86_400_000;
