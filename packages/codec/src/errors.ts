/**
 * Errors of the block codec: data first (a stable code plus the values involved), so a caller
 * (the store, the API) can act on the code and never has to parse the message.
 */

import type { ErrorCatalog } from '@isentrope/errors';

/** Every code of packages/codec, once; see ERRORS.md (a test checks that each code raised is listed). */
export const CODEC_ERRORS = {
  CODEC_BAD_INPUT: {
    meaning:
      'encodeBlock was given columns it cannot store (lengths differ, a time is not a safe integer or goes backwards).',
  },
  CODEC_BAD_VERSION: { meaning: 'The block starts with a format version this codec does not read.' },
  CODEC_TRUNCATED: { meaning: 'The block ends before the data its header announces.' },
  CODEC_CORRUPT: {
    meaning: 'The block holds a value no encoder writes (bad mode, length, run or time); it is damaged.',
  },
} as const satisfies ErrorCatalog;

export type CodecErrorCode = keyof typeof CODEC_ERRORS;

/** A block that cannot be written or read; `details` names the field and the values involved. */
export class CodecError extends Error {
  constructor(
    readonly code: CodecErrorCode,
    message: string,
    readonly details: Record<string, unknown> = {},
  ) {
    super(message);
    this.name = 'CodecError';
  }
}

/** The one way the decoder reports damage: names the section and where it stopped. */
export function corrupt(section: string, what: string, details: Record<string, unknown> = {}): CodecError {
  return new CodecError('CODEC_CORRUPT', `Sample block is damaged in its ${section}: ${what}.`, {
    section,
    ...details,
  });
}

export function truncated(section: string, details: Record<string, unknown> = {}): CodecError {
  return new CodecError(
    'CODEC_TRUNCATED',
    `Sample block ends inside its ${section}; it was cut short (store the whole encodeBlock output).`,
    { section, ...details },
  );
}
