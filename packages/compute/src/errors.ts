/**
 * Errors of the compute pipeline: a stable code, the values involved, a readable message.
 * Codes are never reused; COMPUTE_ERRORS documents each one (and ERRORS.md).
 */

import type { ErrorCatalog } from '@isentrope/errors';

/** Every code of packages/compute, once; see ERRORS.md. Messages are written where raised. */
export const COMPUTE_ERRORS = {
  COMPUTE_BAD_CONFIG: {
    meaning:
      "A machine's or tag's configuration cannot be used for computing (the field and value are given).",
  },
  COMPUTE_FLUID_UNAVAILABLE: {
    meaning: 'The property model the machine needs is not available in this build.',
  },
  COMPUTE_BAD_RANGE: { meaning: 'A compute range is reversed or not finite (the range is given).' },
} as const satisfies ErrorCatalog;

export type ComputeErrorCode = keyof typeof COMPUTE_ERRORS;

export class ComputeError extends Error {
  constructor(
    readonly code: ComputeErrorCode,
    message: string,
    /** The values that made the call fail. */
    readonly details: Readonly<Record<string, unknown>> = {},
    options?: { cause?: unknown },
  ) {
    super(message, options);
    this.name = 'ComputeError';
  }
}
