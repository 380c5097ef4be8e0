/**
 * Errors of the ingest service: a stable code, the values involved, and a readable message.
 * Codes are never reused; each is documented in INGEST_ERRORS and ERRORS.md (tested).
 */
import type { ErrorCatalog } from '@isentrope/errors';

/** Every code of services/ingest, once; see ERRORS.md. Messages are written where raised. */
export const INGEST_ERRORS = {
  INGEST_FILE_UNREADABLE: {
    meaning:
      'The file could not be read at all (empty, no header, wrong layout); it goes to the rejected folder.',
  },
  INGEST_BAD_OPTIONS: { meaning: 'A source option is invalid (time zone, delimiter, time format).' },
  INGEST_UNKNOWN_SOURCE: { meaning: 'No source with this id in the plant file.', retired: true },
  INGEST_BUFFER_FULL: {
    meaning: 'The on-disk buffer reached its size limit; the newest samples were refused.',
    retired: true,
  },
  INGEST_BUFFER_CORRUPT: {
    meaning: 'A buffer segment holds a line that cannot be read back.',
    retired: true,
  },
  INGEST_WRITE_FAILED: { meaning: 'Writing samples to the database failed.' },
  INGEST_OPCUA_CONNECT: { meaning: 'Could not connect to the OPC UA endpoint.' },
  INGEST_STOPPED: { meaning: 'The ingest service was stopped.' },
  INGEST_UNAUTHORIZED: { meaning: 'HTTP push without a valid bearer token (401).', status: 401 },
  INGEST_BAD_BATCH: {
    meaning: 'HTTP push body is not a JSON array of samples, or too large (400/413).',
    status: 400,
  },
  INGEST_RATE_LIMITED: {
    meaning:
      "HTTP push beyond the route's own rate limit (429); the Retry-After header says when to send again.",
    status: 429,
  },
  INGEST_INTERNAL: {
    meaning: 'HTTP push failed for a reason of ours (500); logged with its cause.',
    status: 500,
  },
} as const satisfies ErrorCatalog;

export type IngestErrorCode = keyof typeof INGEST_ERRORS;

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
