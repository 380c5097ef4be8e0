/**
 * Errors of the ingest service: a stable code, the values involved, and a readable message.
 * Codes are never reused; each is documented in INGEST_ERROR_CODES (tested).
 */

export const INGEST_ERROR_CODES = {
  INGEST_FILE_UNREADABLE:
    'The file could not be read at all (empty, no header, wrong layout); it goes to the rejected folder.',
  INGEST_BAD_OPTIONS: 'A source option is invalid (time zone, delimiter, time format).',
  INGEST_UNKNOWN_SOURCE: 'No source with this id in the plant file.',
  INGEST_BUFFER_FULL: 'The on-disk buffer reached its size limit; the newest samples were refused.',
  INGEST_BUFFER_CORRUPT: 'A buffer segment holds a line that cannot be read back.',
  INGEST_WRITE_FAILED: 'Writing samples to the database failed.',
  INGEST_OPCUA_CONNECT: 'Could not connect to the OPC UA endpoint.',
  INGEST_STOPPED: 'The ingest service was stopped.',
  INGEST_UNAUTHORIZED: 'HTTP push without a valid bearer token (401).',
  INGEST_BAD_BATCH: 'HTTP push body is not a JSON array of samples, or too large (400/413).',
  INGEST_RATE_LIMITED:
    "HTTP push beyond the route's own rate limit (429); the Retry-After header says when to send again.",
  INGEST_INTERNAL: 'HTTP push failed for a reason of ours (500); logged with its cause.',
} as const;

export type IngestErrorCode = keyof typeof INGEST_ERROR_CODES;

export class IngestError extends Error {
  constructor(
    readonly code: IngestErrorCode,
    message: string,
    /** The values that made the operation fail (file, line, option, size ...). */
    readonly details: Readonly<Record<string, unknown>> = {},
    options?: { cause?: unknown },
  ) {
    super(message, options);
    this.name = 'IngestError';
  }
}

export function errorMessage(error: unknown): string {
  return error instanceof Error ? error.message : String(error);
}
