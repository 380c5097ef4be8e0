/**
 * Errors raised by the monitoring logic. Data first (a stable code plus the values involved);
 * the API turns them into HTTP problems by code, never by parsing the message.
 */

import { type ErrorCatalog, formatError, type TemplateParams } from '@isentrope/errors';

/** Every code of packages/monitor, once; see ERRORS.md. The API answers them with 422. */
export const MONITOR_ERRORS = {
  MONITOR_BAD_INPUT: {
    meaning: 'An option or input value is not allowed (the field and the reason are given).',
    template: '{field} = {value}: {reason}',
    status: 422,
  },
  MONITOR_UNSORTED_TIMES: {
    meaning: 'Sample times of a series must be non-decreasing.',
    template:
      '{series}: time at index {index} ({timeMs} ms) is earlier than the one before ({previousMs} ms); sort the samples by time first.',
    status: 422,
  },
  MONITOR_TOO_FEW_POINTS: {
    meaning: 'Too few usable points for the requested statistic or fit.',
    template: '{what}: {have} usable points, at least {need} needed.',
    status: 422,
  },
  MONITOR_LENGTH_MISMATCH: {
    meaning: 'Parallel arrays of one series have different lengths.',
    template: '{what}: length {actual}, expected {expected}.',
    status: 422,
  },
  MONITOR_SINGULAR_FIT: {
    meaning: 'The least-squares system is singular (too few distinct operating points).',
    template: '{what}: {distinctX} distinct operating points cannot fix a polynomial of degree {degree}.',
    status: 422,
  },
} as const satisfies ErrorCatalog;

export type MonitorErrorCode = keyof typeof MONITOR_ERRORS;

function monitorMessage(code: MonitorErrorCode, params: TemplateParams): string {
  return formatError(MONITOR_ERRORS, code, params);
}

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
    super(monitorMessage('MONITOR_BAD_INPUT', { field, value: String(value), reason }));
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
    super(monitorMessage('MONITOR_UNSORTED_TIMES', { series, index, timeMs, previousMs }));
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
    super(monitorMessage('MONITOR_TOO_FEW_POINTS', { what, have, need }));
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
    super(monitorMessage('MONITOR_LENGTH_MISMATCH', { what, actual, expected }));
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
    super(monitorMessage('MONITOR_SINGULAR_FIT', { what, distinctX, degree }));
    this.name = 'SingularFitError';
  }
}
