/**
 * Cross-check of a gauge/absolute mix-up through the machine: the polytropic temperature exponent
 *   m = ln(T_out / T_in) / ln(p_out / p_in)   [-]
 * of a gas or superheated-vapour compressor or turbine follows from T_out / T_in = (p_out / p_in)^m;
 * for an ideal gas m = (k - 1) / (k eta_p) in compression and eta_p (k - 1) / k in expansion (the
 * polytropic relations, e.g. ASME PTC 10 and any turbomachinery text). It depends on the gas and
 * the polytropic efficiency, not on the pressure ratio, so a real change of pressure leaves it
 * nearly unchanged (the temperatures follow), while one ambient added to or lost from a pressure
 * reading moves it at once (the temperatures do not follow). This catches what the tag alone
 * cannot show: a real pressure step of about one atmosphere is told apart from a mix-up, and the
 * mix-up is pinned to the inlet or the outlet tag.
 *
 * Method (our own composition, common practice, no source): medians of m over the windowPoints
 * usable readings before and after the instant asked about; the change counts when it exceeds the
 * larger of relativeTolerance x m_before and four standard errors of the difference of the two
 * medians (MAD of each window scaled by 1.4826, median standard error 1.2533 sigma / sqrt(w),
 * normal-theory factors). Then each of the four hypotheses (inlet or outlet tag reading one
 * ambient high or low after the instant) is undone on the after-window; a hypothesis explains
 * the change when the corrected median returns within that threshold of m_before, the closest
 * such one is named. Not for pumps (liquid), fans (ratio near 1: refused below |ln ratio| 0.05)
 * or wet steam (T fixed by p). Meant for the instant of a step the tag detector found: an
 * efficiency step of just the size that one ambient makes in the exponent would read as a mix-up,
 * but it comes without a pressure step in the tag.
 * As with the step detector, which side of the instant is wrong is not decided here: a repair
 * of an earlier mix-up looks like the opposite mix-up.
 */
import { LengthMismatchError, MonitorBadInputError, TooFewPointsError } from '../errors.js';
import { medianInPlace } from '../stats.js';
import {
  checkAmbientPressure,
  type GaugeAbsoluteCause,
  type GaugeAbsoluteDirection,
} from './gauge-absolute.js';

export interface PressureRatioInput {
  /** Sample times [epoch ms], non-decreasing. */
  readonly t: ArrayLike<number>;
  /** Inlet and outlet pressure as configured [Pa] (absolute, after any gauge conversion). */
  readonly pIn: ArrayLike<number>;
  readonly pOut: ArrayLike<number>;
  /** Inlet and outlet temperature [K]. */
  readonly TIn: ArrayLike<number>;
  readonly TOut: ArrayLike<number>;
  /** The site's ambient (barometric) pressure [Pa]. */
  readonly ambientPressure: number;
  /** 1 = usable, 0 = excluded. */
  readonly valid?: Uint8Array;
}

export interface PressureRatioOptions {
  /** Usable readings in each window; default 15, at least 3. */
  readonly windowPoints?: number;
  /** Smallest change of m that counts, as a fraction of m before; default 0.02, in (0, 1). */
  readonly relativeTolerance?: number;
}

export interface PressureRatioHypothesis {
  readonly tag: 'inlet' | 'outlet';
  /** After the instant this tag reads one ambient high (or low). */
  readonly direction: GaugeAbsoluteDirection;
  readonly likelyCause: GaugeAbsoluteCause;
  /** Median m after the instant with this tag corrected [-] (NaN when the correction leaves no usable ratio). */
  readonly exponentCorrected: number;
}

export interface PressureRatioConsistency {
  /**
   * consistent: m did not change, so a pressure step at this instant is real (or there is none);
   * mix-up: m changed and one gauge/absolute hypothesis explains it (`mixUp`);
   * unexplained: m changed and no hypothesis explains it (an efficiency change or another fault).
   */
  readonly verdict: 'consistent' | 'mix-up' | 'unexplained';
  /** Median m before and after the instant [-], and the change that counts [-]. */
  readonly exponentBefore: number;
  readonly exponentAfter: number;
  readonly threshold: number;
  readonly hypotheses: readonly PressureRatioHypothesis[];
  readonly mixUp?: PressureRatioHypothesis;
}

/** Below this median |ln(p_out / p_in)| the exponent is ill-conditioned (a fan): refused. */
const MIN_LOG_RATIO = 0.05;

function exponent(pIn: number, pOut: number, TIn: number, TOut: number): number {
  if (!(pIn > 0 && pOut > 0 && TIn > 0 && TOut > 0 && pIn !== pOut)) return Number.NaN;
  return Math.log(TOut / TIn) / Math.log(pOut / pIn);
}

/** Median of the finite values and its standard error from the MAD (normal-theory factors). */
function medianAndError(v: number[]): { median: number; error: number } {
  const median = medianInPlace(v);
  const dev = v.map((x) => Math.abs(x - median));
  const sigma = 1.4826 * medianInPlace(dev);
  return { median, error: (1.2533 * sigma) / Math.sqrt(v.length) };
}

/**
 * Checks through the machine whether a gauge/absolute mix-up of the inlet or outlet pressure tag
 * starts at instant `at` [epoch ms] (method in the module comment).
 * Throws LengthMismatchError, MonitorBadInputError (options, ambient) and TooFewPointsError (fewer
 * than windowPoints usable readings on either side of `at`).
 */
export function pressureRatioConsistency(
  input: PressureRatioInput,
  at: number,
  options: PressureRatioOptions = {},
): PressureRatioConsistency {
  const { t, pIn, pOut, TIn, TOut, ambientPressure: ambient, valid } = input;
  checkAmbientPressure(ambient);
  const w = options.windowPoints ?? 15;
  const relTol = options.relativeTolerance ?? 0.02;
  if (!(Number.isInteger(w) && w >= 3)) throw new MonitorBadInputError('windowPoints', w, 'integer >= 3');
  if (!(relTol > 0 && relTol < 1))
    throw new MonitorBadInputError('relativeTolerance', relTol, 'fraction of m in (0, 1)');
  if (!Number.isFinite(at)) throw new MonitorBadInputError('at', at, 'must be a finite time [epoch ms]');
  const n = t.length;
  for (const [name, a] of [
    ['pIn', pIn],
    ['pOut', pOut],
    ['TIn', TIn],
    ['TOut', TOut],
  ] as const)
    if (a.length !== n) throw new LengthMismatchError(name, n, a.length);
  if (valid !== undefined && valid.length !== n) throw new LengthMismatchError('valid', n, valid.length);

  const usable = (i: number): boolean =>
    (valid === undefined || valid[i] !== 0) &&
    Number.isFinite(exponent(pIn[i] as number, pOut[i] as number, TIn[i] as number, TOut[i] as number));
  // The windows: the last w usable readings before `at`, the first w at or after it.
  const before: number[] = [];
  const after: number[] = [];
  let first = 0;
  while (first < n && (t[first] as number) < at) first++;
  for (let i = first - 1; i >= 0 && before.length < w; i--) if (usable(i)) before.push(i);
  for (let i = first; i < n && after.length < w; i++) if (usable(i)) after.push(i);
  if (before.length < w)
    throw new TooFewPointsError('pressureRatioConsistency before `at`', before.length, w);
  if (after.length < w) throw new TooFewPointsError('pressureRatioConsistency after `at`', after.length, w);

  const logRatio = Math.abs(
    medianInPlace(before.map((i) => Math.log((pOut[i] as number) / (pIn[i] as number)))),
  );
  if (logRatio < MIN_LOG_RATIO)
    throw new MonitorBadInputError(
      'median |ln(pOut / pIn)| before `at`',
      logRatio,
      `below ${MIN_LOG_RATIO}: the pressure ratio is too close to 1 for the exponent (a fan?)`,
    );
  const m = (i: number, dIn: number, dOut: number): number =>
    exponent((pIn[i] as number) + dIn, (pOut[i] as number) + dOut, TIn[i] as number, TOut[i] as number);
  const b = medianAndError(before.map((i) => m(i, 0, 0)));
  const a = medianAndError(after.map((i) => m(i, 0, 0)));
  const threshold = Math.max(relTol * Math.abs(b.median), 4 * Math.hypot(b.error, a.error));

  const hypotheses: PressureRatioHypothesis[] = [];
  for (const tag of ['inlet', 'outlet'] as const)
    for (const direction of ['reads-high', 'reads-low'] as const) {
      // Undo the hypothesis: a tag reading one ambient high is corrected by subtracting it.
      const d = direction === 'reads-high' ? -ambient : ambient;
      const corrected = after
        .map((i) => (tag === 'inlet' ? m(i, d, 0) : m(i, 0, d)))
        .filter((x) => Number.isFinite(x));
      hypotheses.push({
        tag,
        direction,
        likelyCause:
          direction === 'reads-high'
            ? 'absolute transmitter on a gauge tag'
            : 'gauge transmitter on an absolute tag',
        // Fewer than half the window left usable: the hypothesis cannot be judged.
        exponentCorrected: corrected.length * 2 > w ? medianInPlace(corrected) : Number.NaN,
      });
    }
  const base = { exponentBefore: b.median, exponentAfter: a.median, threshold, hypotheses };
  if (Math.abs(a.median - b.median) <= threshold) return { verdict: 'consistent', ...base };
  let best: PressureRatioHypothesis | undefined;
  for (const h of hypotheses) {
    const miss = Math.abs(h.exponentCorrected - b.median);
    if (miss <= threshold && (best === undefined || miss < Math.abs(best.exponentCorrected - b.median)))
      best = h;
  }
  return best === undefined
    ? { verdict: 'unexplained', ...base }
    : { verdict: 'mix-up', ...base, mixUp: best };
}
