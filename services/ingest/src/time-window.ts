/**
 * Which sample times are plausible. A time far outside the plant's life (year 0001, 9999,
 * epoch milliseconds near 8.64e15) is a broken clock or a wrong unit, never a measurement,
 * and the store would have to create a partition for each month up to it: the whole batch
 * it came with would fail. Such a sample is refused on its own, with this reason.
 */

export interface TimeWindow {
  /** Earliest time accepted [ms since epoch]; default 1970-01-01T00:00:00Z. */
  readonly earliestMs: number;
  /** How far past the receiver's clock a time may lie [ms]; default one day (clock skew, zone mistakes). */
  readonly aheadMs: number;
}

export const DEFAULT_TIME_WINDOW: TimeWindow = { earliestMs: 0, aheadMs: 86_400_000 };

/** The window with defaults for the fields not given. */
export function timeWindowOf(input: Partial<TimeWindow> = {}): TimeWindow {
  return {
    earliestMs: input.earliestMs ?? DEFAULT_TIME_WINDOW.earliestMs,
    aheadMs: input.aheadMs ?? DEFAULT_TIME_WINDOW.aheadMs,
  };
}

function iso(t: number): string {
  return Number.isFinite(t) && Math.abs(t) <= 8.64e15 ? new Date(t).toISOString() : String(t);
}

/** undefined when t [ms] lies in the window at clock time now [ms]; else why not, naming the window. */
export function outsideTimeWindow(t: number, window: TimeWindow, now: number): string | undefined {
  const latest = now + window.aheadMs;
  if (t >= window.earliestMs && t <= latest) return undefined;
  return `time ${iso(t)} is outside the plausible window ${iso(window.earliestMs)} to ${iso(latest)} (now + ${window.aheadMs / 3_600_000} h); check the sender's clock and time unit`;
}
