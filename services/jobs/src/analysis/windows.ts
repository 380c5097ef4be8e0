/**
 * Window statistics from SQL aggregates, with the uncertainty rule of packages/monitor/src/rolling.ts
 * (GUM, JCGM 100:2008, mean of inputs whose systematic part is fully correlated):
 *   u_mean^2 = u_sys^2 + s^2 / n,
 * u_sys the mean of the per-point standard uncertainties (they do not average down), s the sample
 * standard deviation over the n points used. With n < 2 the scatter is unknown and u is NaN (never
 * understated). The database does the sums so that a 7-day window costs one aggregate, not 10,000
 * rows over the wire; windows.test.ts checks the result against rollingWindows itself.
 */

export interface WindowSums {
  /** Points used. */
  readonly n: number;
  /** Mean of the figure [its unit]; null when n = 0. */
  readonly mean: number | null;
  /** Sample standard deviation (divisor n - 1); null when n < 2. */
  readonly std: number | null;
  /** Mean per-point standard uncertainty [unit of the figure]. */
  readonly meanU: number | null;
}

export interface WindowFigure {
  readonly n: number;
  /** n over the grid points the window holds, 0..1. */
  readonly coverage: number;
  /** NaN when n = 0. */
  readonly mean: number;
  /** Standard uncertainty of the mean; NaN when n < 2. */
  readonly u: number;
}

/** The figure of a window of `lengthMs` on a grid of `stepMs` from its aggregates. */
export function windowFigure(sums: WindowSums, lengthMs: number, stepMs: number): WindowFigure {
  const slots = Math.round(lengthMs / stepMs);
  const n = sums.n;
  const mean = n > 0 && sums.mean !== null ? sums.mean : Number.NaN;
  const s = n >= 2 && sums.std !== null ? sums.std : Number.NaN;
  const uSys = sums.meanU ?? Number.NaN;
  return {
    n,
    coverage: slots > 0 ? n / slots : 0,
    mean,
    u: Math.sqrt(uSys * uSys + (s * s) / n),
  };
}

/** NaN and infinities become null for the database. */
export function finiteOrNull(v: number | null | undefined): number | null {
  return v !== null && v !== undefined && Number.isFinite(v) ? v : null;
}
