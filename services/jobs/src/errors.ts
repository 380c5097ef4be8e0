/**
 * Errors of the jobs service: a stable code, the values involved, a readable message.
 * Codes are never reused; JOBS_ERROR_CODES documents each one.
 */

export type JobsErrorCode =
  | 'JOBS_BAD_CONFIG'
  | 'JOBS_FLUID_UNAVAILABLE'
  | 'JOBS_BAD_RANGE'
  | 'JOBS_NOT_FOUND'
  | 'JOBS_ALERT_REJECTED'
  | 'JOBS_REPORT_UNAVAILABLE'
  | 'JOBS_BAD_SAMPLES';

export const JOBS_ERROR_CODES: Readonly<Record<JobsErrorCode, string>> = {
  JOBS_BAD_CONFIG:
    "A machine's or tag's configuration cannot be used for computing (the field and value are given).",
  JOBS_FLUID_UNAVAILABLE: 'The property model the machine needs is not available in this build.',
  JOBS_BAD_RANGE: 'A time range is empty, reversed or not finite.',
  JOBS_NOT_FOUND: 'The machine or alert asked for does not exist.',
  JOBS_ALERT_REJECTED: 'The alert lifecycle refused the action (the reducer code is given).',
  JOBS_REPORT_UNAVAILABLE: 'The monthly report builder is not wired in; no report was made.',
  JOBS_BAD_SAMPLES:
    'The database sent sample rows in a form the reader does not expect (the offset is given).',
};

export class JobsError extends Error {
  constructor(
    readonly code: JobsErrorCode,
    message: string,
    /** The values that made the call fail. */
    readonly details: Readonly<Record<string, unknown>> = {},
    options?: { cause?: unknown },
  ) {
    super(message, options);
    this.name = 'JobsError';
  }
}
