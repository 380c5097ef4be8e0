/**
 * Errors of the compute pipeline: a stable code, the values involved, a readable message.
 * Codes are never reused; COMPUTE_ERROR_CODES documents each one.
 */

export type ComputeErrorCode = 'COMPUTE_BAD_CONFIG' | 'COMPUTE_FLUID_UNAVAILABLE' | 'COMPUTE_BAD_RANGE';

export const COMPUTE_ERROR_CODES: Readonly<Record<ComputeErrorCode, string>> = {
  COMPUTE_BAD_CONFIG:
    "A machine's or tag's configuration cannot be used for computing (the field and value are given).",
  COMPUTE_FLUID_UNAVAILABLE: 'The property model the machine needs is not available in this build.',
  COMPUTE_BAD_RANGE: 'A compute range is reversed or not finite (the range is given).',
};

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
