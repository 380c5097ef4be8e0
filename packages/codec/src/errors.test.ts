import { describe, expect, it } from 'vitest';
import { decodeBlock, encodeBlock } from './block.js';
import { CODEC_ERRORS, CodecError } from './errors.js';
import { columns } from './testing.js';

function caught(f: () => unknown): CodecError {
  try {
    f();
  } catch (e) {
    if (e instanceof CodecError) return e;
  }
  throw new Error('expected a CodecError');
}

describe('codec errors', () => {
  it('every code raised is documented, and each error carries its details', () => {
    const valid = encodeBlock(columns([0, 1], [0.5, 0.25]));
    const errors = [
      caught(() => encodeBlock(columns([1, 2], [1]))),
      caught(() => decodeBlock(Uint8Array.from([9]))),
      caught(() => decodeBlock(valid.subarray(0, valid.length - 1))),
      caught(() => decodeBlock(Uint8Array.from([...valid, 0]))),
    ];
    expect(errors.map((e) => e.code)).toEqual(Object.keys(CODEC_ERRORS));
    expect(errors[0]!.details).toMatchObject({ times: 2, values: 1, qualities: 2 });
    expect(errors[1]!.details).toMatchObject({ version: 9 });
    expect(errors[2]!.details).toHaveProperty('section');
    expect(errors.every((e) => e.name === 'CodecError' && e.message.length > 20)).toBe(true);
  });
});
