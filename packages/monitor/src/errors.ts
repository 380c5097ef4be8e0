/**
 * Errors raised by the monitoring logic. Data first (a stable code plus the values involved);
 * the API turns them into HTTP problems by code, never by parsing the message.
 */

export type MonitorErrorCode =
  | 'MONITOR_BAD_INPUT'
  | 'MONITOR_UNSORTED_TIMES'
  | 'MONITOR_TOO_FEW_POINTS'
  | 'MONITOR_LENGTH_MISMATCH'
  | 'MONITOR_SINGULAR_FIT';

/** Every code with a one-line description; a test checks that each code is documented here. */
export const MONITOR_ERROR_CODES: Readonly<Record<MonitorErrorCode, string>> = {
  MONITOR_BAD_INPUT: 'An option or input value is not allowed (the field and the reason are given).',
  MONITOR_UNSORTED_TIMES: 'Sample times of a series must be non-decreasing.',
  MONITOR_TOO_FEW_POINTS: 'Too few usable points for the requested statistic or fit.',
  MONITOR_LENGTH_MISMATCH: 'Parallel arrays of one series have different lengths.',
  MONITOR_SINGULAR_FIT: 'The least-squares system is singular (too few distinct operating points).',
};

export abstract class MonitorError extends Error {
  abstract readonly code: MonitorErrorCode;
}

/** An option or input is not allowed. */
export class MonitorBadInputError extends MonitorError {
  readonly code = 'MONITOR_BAD_INPUT';
  constructor(
    readonly field: string,
    readonly value: unknown,
    readonly reason: string,
  ) {
    super(`${field} = ${String(value)}: ${reason}`);
    this.name = 'MonitorBadInputError';
  }
}

/** A series whose times go backwards at some index. */
export class UnsortedTimesError extends MonitorError {
  readonly code = 'MONITOR_UNSORTED_TIMES';
  constructor(
    readonly series: string,
    readonly index: number,
    readonly previousMs: number,
    readonly timeMs: number,
  ) {
    super(
      `${series}: time at index ${index} (${timeMs} ms) is earlier than the one before (${previousMs} ms); ` +
        'sort the samples by time first.',
    );
    this.name = 'UnsortedTimesError';
  }
}

/** Fewer usable points than a statistic or fit needs. */
export class TooFewPointsError extends MonitorError {
  readonly code = 'MONITOR_TOO_FEW_POINTS';
  constructor(
    readonly what: string,
    readonly have: number,
    readonly need: number,
  ) {
    super(`${what}: ${have} usable points, at least ${need} needed.`);
    this.name = 'TooFewPointsError';
  }
}

/** Parallel arrays with different lengths. */
export class LengthMismatchError extends MonitorError {
  readonly code = 'MONITOR_LENGTH_MISMATCH';
  constructor(
    readonly what: string,
    readonly expected: number,
    readonly actual: number,
  ) {
    super(`${what}: length ${actual}, expected ${expected}.`);
    this.name = 'LengthMismatchError';
  }
}

/** A singular least-squares system. */
export class SingularFitError extends MonitorError {
  readonly code = 'MONITOR_SINGULAR_FIT';
  constructor(
    readonly what: string,
    readonly distinctX: number,
    readonly degree: number,
  ) {
    super(`${what}: ${distinctX} distinct operating points cannot fix a polynomial of degree ${degree}.`);
    this.name = 'SingularFitError';
  }
}
