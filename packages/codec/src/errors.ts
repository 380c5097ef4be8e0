/**
 * Errors of the block codec: data first (a stable code plus the values involved), so a caller
 * (the store, the API) can act on the code and never has to parse the message.
 */

export type CodecErrorCode = 'CODEC_BAD_INPUT' | 'CODEC_BAD_VERSION' | 'CODEC_TRUNCATED' | 'CODEC_CORRUPT';

/** Every code with a one-line description; a test checks that each code raised is listed here. */
export const CODEC_ERROR_CODES: Readonly<Record<CodecErrorCode, string>> = {
  CODEC_BAD_INPUT:
    'encodeBlock was given columns it cannot store (lengths differ, a time is not a safe integer or goes backwards).',
  CODEC_BAD_VERSION: 'The block starts with a format version this codec does not read.',
  CODEC_TRUNCATED: 'The block ends before the data its header announces.',
  CODEC_CORRUPT: 'The block holds a value no encoder writes (bad mode, length, run or time); it is damaged.',
};

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
