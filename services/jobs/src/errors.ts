/**
 * Errors of the jobs service: a stable code, the values involved, a readable message.
 * Codes are never reused; JOBS_ERRORS documents each one (and ERRORS.md).
 */

import type { ErrorCatalog } from '@isentrope/errors';

/** Every code of services/jobs, once; see ERRORS.md. Messages are written where raised. */
export const JOBS_ERRORS = {
  JOBS_BAD_CONFIG: {
    meaning:
      "A machine's or tag's configuration cannot be used for computing (the field and value are given).",
  },
  JOBS_FLUID_UNAVAILABLE: {
    meaning: 'The property model the machine needs is not available in this build.',
    retired: true,
  },
  JOBS_BAD_RANGE: { meaning: 'A time range is empty, reversed or not finite.' },
  JOBS_NOT_FOUND: { meaning: 'The machine or alert asked for does not exist.' },
  JOBS_ALERT_REJECTED: {
    meaning: 'The alert lifecycle refused the action (the reducer code is given).',
    retired: true,
  },
  JOBS_REPORT_UNAVAILABLE: {
    meaning: 'The monthly report builder is not wired in; no report was made.',
    retired: true,
  },
  JOBS_BAD_BASELINE: {
    meaning:
      'A stored baseline row without its fitted model cannot be evaluated: it has no coefficients or a non-finite one (the baseline, its degree and the coefficient are given).',
  },
  JOBS_BAD_SAMPLES: {
    meaning: 'The database sent sample rows in a form the reader does not expect (the offset is given).',
    retired: true,
  },
} as const satisfies ErrorCatalog;

export type JobsErrorCode = keyof typeof JOBS_ERRORS;

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
