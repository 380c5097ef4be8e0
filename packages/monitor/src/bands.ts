/**
 * Band evaluation with warning and alarm levels, deadband (hysteresis), on-delay and off-delay,
 * a minimum data coverage and an uncertainty test, as a pure step function over time.
 * These are the usual alarm-handling tools of ANSI/ISA-18.2 (deadband, on-delay, off-delay);
 * the numbers are the caller's.
 *
 * direction 'low': a value below a level is bad (drift in points of efficiency, negative = loss;
 * absolute efficiency). direction 'high': above is bad (entropy generation, specific work).
 *
 * A level is entered when the value is beyond it and passes the uncertainty test:
 *   'from-zero' (default, for drift): |value| > k u  -- the drift differs from zero by more than
 *      k times its standard uncertainty;
 *   'beyond-level' (for absolute quantities): the value is beyond the level by more than k u.
 * A level is left only when the value comes back past the level by more than the deadband
 * (the uncertainty test does not apply to leaving: it would make a noisy edge flap).
 * A change of severity takes effect only when the new target has held without a break for the
 * on-delay (rising severity) or off-delay (falling severity): it changes at the first sample whose
 * time is at least the delay after the first sample that asked for it. Samples with too little
 * coverage, a NaN value or an unknown uncertainty hold the severity and restart any pending delay.
 */
import { MonitorBadInputError } from './errors.js';

export type Severity = 'normal' | 'warning' | 'alarm';

export interface BandConfig {
  readonly direction: 'low' | 'high';
  /** Warning level [unit of the value]; omit for an alarm-only band. */
  readonly warning?: number;
  /** Alarm level [unit of the value]. */
  readonly alarm: number;
  /** Hysteresis [unit of the value], >= 0; default 0. */
  readonly deadband?: number;
  /** [ms], default 0. */
  readonly onDelayMs?: number;
  /** [ms], default 0. */
  readonly offDelayMs?: number;
  /** Coverage below which a sample neither raises nor clears; default 0.5. */
  readonly minCoverage?: number;
  /** Coverage factor of the uncertainty test; default 2 (about 95 % for a normal distribution). */
  readonly k?: number;
  readonly uncertaintyTest?: 'from-zero' | 'beyond-level';
}

export interface BandSample {
  /** [ms] */
  readonly t: number;
  readonly value: number;
  /** Standard uncertainty of the value [same unit]; default 0. */
  readonly u?: number;
  /** Data coverage of the value, 0..1; default 1. */
  readonly coverage?: number;
}

export interface BandState {
  readonly severity: Severity;
  /** A severity waiting out its delay, and the time it was first asked for [ms]. */
  readonly pending?: { readonly severity: Severity; readonly sinceMs: number };
}

export interface BandStep {
  readonly state: BandState;
  /** The severity changed at this sample. */
  readonly changed: boolean;
  readonly from: Severity;
  readonly to: Severity;
  /** Why the step did what it did (for the alert's evidence). */
  readonly reason: string;
}

export const INITIAL_BAND_STATE: BandState = { severity: 'normal' };

const RANK: Readonly<Record<Severity, number>> = { normal: 0, warning: 1, alarm: 2 };

/** Check a band's configuration; throws MonitorBadInputError with the offending field. */
export function checkBand(config: BandConfig): void {
  const { direction, warning, alarm } = config;
  if (!Number.isFinite(alarm)) throw new MonitorBadInputError('alarm', alarm, 'must be finite');
  if (warning !== undefined) {
    const ordered = direction === 'low' ? warning > alarm : warning < alarm;
    if (!ordered)
      throw new MonitorBadInputError(
        'warning',
        warning,
        `must lie on the normal side of the alarm level ${alarm}`,
      );
  }
  for (const [name, v] of [
    ['deadband', config.deadband ?? 0],
    ['onDelayMs', config.onDelayMs ?? 0],
    ['offDelayMs', config.offDelayMs ?? 0],
    ['k', config.k ?? 2],
  ] as const)
    if (!(v >= 0)) throw new MonitorBadInputError(name, v, 'must be >= 0');
  const c = config.minCoverage ?? 0.5;
  if (!(c >= 0 && c <= 1)) throw new MonitorBadInputError('minCoverage', c, 'must lie in 0..1');
}

/** Severity the value asks for now, given the current severity (hysteresis). */
function target(current: Severity, value: number, u: number, config: BandConfig): Severity {
  const k = config.k ?? 2;
  const db = config.deadband ?? 0;
  const low = config.direction === 'low';
  const beyond = (level: number, margin: number): boolean =>
    low ? value < level - margin : value > level + margin;
  const significant = (level: number): boolean =>
    (config.uncertaintyTest ?? 'from-zero') === 'from-zero' ? Math.abs(value) > k * u : beyond(level, k * u);
  const holds = (sev: Severity, level: number): boolean =>
    RANK[current] >= RANK[sev]
      ? beyond(level, -db) // stay until the value is back past level by the deadband
      : beyond(level, 0) && significant(level);
  if (holds('alarm', config.alarm)) return 'alarm';
  if (config.warning !== undefined && holds('warning', config.warning)) return 'warning';
  return 'normal';
}

/** Advance the band by one sample (samples in time order). */
export function stepBand(state: BandState, sample: BandSample, config: BandConfig): BandStep {
  const from = state.severity;
  const u = sample.u ?? 0;
  const coverage = sample.coverage ?? 1;
  if (!Number.isFinite(sample.value) || !Number.isFinite(u) || coverage < (config.minCoverage ?? 0.5)) {
    return {
      state: { severity: from },
      changed: false,
      from,
      to: from,
      reason: `insufficient data (coverage ${coverage.toFixed(2)}, value ${sample.value}): severity held`,
    };
  }
  const want = target(from, sample.value, u, config);
  if (want === from)
    return {
      state: { severity: from },
      changed: false,
      from,
      to: from,
      reason: `value ${sample.value} keeps ${from}`,
    };
  const rising = RANK[want] > RANK[from];
  const delay = rising ? (config.onDelayMs ?? 0) : (config.offDelayMs ?? 0);
  // The delay runs while the target stays on the same side of the current severity.
  const pending = state.pending;
  const sameSide = pending !== undefined && RANK[pending.severity] > RANK[from] === rising;
  const sinceMs = sameSide ? pending.sinceMs : sample.t;
  if (sample.t - sinceMs >= delay) {
    return {
      state: { severity: want },
      changed: true,
      from,
      to: want,
      reason: `value ${sample.value} (u ${u}) ${rising ? 'entered' : 'left'} the band; ${rising ? 'on' : 'off'}-delay of ${delay} ms held since ${sinceMs}`,
    };
  }
  return {
    state: { severity: from, pending: { severity: want, sinceMs } },
    changed: false,
    from,
    to: from,
    reason: `value ${sample.value} asks for ${want}; waiting for the ${rising ? 'on' : 'off'}-delay (${sample.t - sinceMs} of ${delay} ms)`,
  };
}
