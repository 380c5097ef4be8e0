import { describe, expect, it } from 'vitest';
import { BLOCK_FORMAT_VERSION, blockCount, decodeBlock, encodeBlock } from './block.js';
import type { SampleColumns } from './columns.js';
import { CodecError } from './errors.js';
import { columns, firstDifference, setBits } from './testing.js';

function roundTrip(c: SampleColumns): Uint8Array {
  const bytes = encodeBlock(c);
  const back = decodeBlock(bytes);
  expect(firstDifference(back.times, c.times)).toBe(-1);
  expect(firstDifference(back.values, c.values)).toBe(-1);
  expect(firstDifference(back.qualities, c.qualities)).toBe(-1);
  expect(blockCount(bytes)).toBe(c.times.length);
  return bytes;
}

/** The layout byte of a block of fewer than 128 samples: version, count, layout. */
function valueMode(bytes: Uint8Array): 'xor' | 'decimal' {
  return ((bytes[2]! >>> 2) & 3) === 0 ? 'xor' : 'decimal';
}

/** The time and value sections of a small block (every length below 128, so one byte each). */
function sections(bytes: Uint8Array): { times: Uint8Array; values: Uint8Array } {
  const at = valueMode(bytes) === 'xor' ? 3 : 4;
  const timeLength = bytes[at]!;
  const valueLength = bytes[at + 1]!;
  const times = bytes.subarray(at + 2, at + 2 + timeLength);
  return { times, values: bytes.subarray(at + 2 + timeLength, at + 2 + timeLength + valueLength) };
}

function codeOf(f: () => unknown): string {
  try {
    f();
  } catch (e) {
    if (e instanceof CodecError) return e.code;
    throw e;
  }
  return 'no error';
}

const MINUTE_US = 60_000_000;
const minutes = (n: number, start = 1_700_000_000_000_000) =>
  Array.from({ length: n }, (_, i) => start + i * MINUTE_US);

describe('encodeBlock / decodeBlock round trip (bit for bit)', () => {
  it('an empty block is the version and a zero count', () => {
    const bytes = roundTrip(columns([], []));
    expect(Array.from(bytes)).toEqual([BLOCK_FORMAT_VERSION, 0]);
  });

  it('one sample', () => {
    roundTrip(columns([-1], [Math.PI], [0]));
  });

  it('NaN with payloads (quiet, signalling, negative), -0, denormals, infinities, extremes', () => {
    const values = Float64Array.from([
      0,
      -0,
      Number.MIN_VALUE,
      -Number.MIN_VALUE,
      2.225073858507201e-308, // largest denormal (IEEE 754 binary64, from memory)
      Number.MAX_VALUE,
      -Number.MAX_VALUE,
      Number.POSITIVE_INFINITY,
      Number.NEGATIVE_INFINITY,
      0,
      0,
      0,
      -0,
      1,
    ]);
    setBits(values, 9, 0x7ff80000, 0x00000001); // quiet NaN, payload 1
    setBits(values, 10, 0x7ff00000, 0x00000001); // signalling NaN
    setBits(values, 11, 0xfff7ffff, 0xffffffff); // negative NaN, all payload bits set
    const bytes = roundTrip(columns(minutes(values.length), values));
    expect(valueMode(bytes)).toBe('xor');
  });

  it('equal times, huge gaps, times before 1970 and at both ends of the safe integers', () => {
    roundTrip(columns([-5e15, -5e15, -5e15, -1, 0, 0, 1, 2 ** 52, 2 ** 52 + 1], [1, 2, 3, 4, 5, 6, 7, 8, 9]));
    const max = Number.MAX_SAFE_INTEGER;
    roundTrip(columns([-max, -max + 1, 0, max - 1, max], [1, 2, 3, 4, 5])); // span beyond 2^53: raw times
    roundTrip(columns([max, max, max], [1, 1, 1]));
  });

  it('alternating, constant and long runs of values and qualities', () => {
    const n = 5000;
    const alternating = Array.from({ length: n }, (_, i) => (i % 2 === 0 ? 1.5 : -273.15));
    roundTrip(
      columns(
        minutes(n),
        alternating,
        alternating.map((_, i) => (i % 2 === 0 ? 192 : 0)),
      ),
    );
    const constant = roundTrip(columns(minutes(n), new Array(n).fill(42.125)));
    // A steady series: 1 bit a value, one run of times and qualities (common practice, no source).
    expect(constant.length).toBeLessThan(n / 8 + 40);
    const runs = Array.from({ length: n }, (_, i) => (i < 4000 ? 192 : i < 4500 ? -32768 : 32767));
    roundTrip(columns(minutes(n), alternating, runs));
  });

  it('takes decimal scaling for fixed-resolution readings, Gorilla XOR otherwise', () => {
    const n = 100;
    const fourDecimals = Array.from(
      { length: n },
      (_, i) => Math.round((12 + Math.sin(i) * 0.01) * 1e4) / 1e4,
    );
    const decimal = roundTrip(columns(minutes(n), fourDecimals));
    expect(valueMode(decimal)).toBe('decimal');
    // One value that is no short decimal (0.1 + 0.2 has 17 significant digits) keeps XOR.
    const mixed = roundTrip(columns(minutes(n), [...fourDecimals.slice(1), 0.1 + 0.2]));
    expect(valueMode(mixed)).toBe('xor');
    // -0 and NaN are not decimals: they would not come back bit for bit from an integer.
    expect(valueMode(roundTrip(columns(minutes(n), [...fourDecimals.slice(1), -0])))).toBe('xor');
    expect(valueMode(roundTrip(columns(minutes(n), [...fourDecimals.slice(1), Number.NaN])))).toBe('xor');
  });

  it('writes the bit layout of Pelkonen et al. (VLDB 2015) section 4.1.2, worked by hand', () => {
    // 1.0 = 0x3FF0000000000000, 2.0 = 0x4000000000000000, 3.0 = 0x4008000000000000 (IEEE 754).
    // -0 = 0x8000000000000000 at the end keeps the block off decimal scaling.
    const bytes = encodeBlock(columns([0, 1, 2, 3, 4], [1, 1, 2, 3, -0]));
    expect(valueMode(bytes)).toBe('xor');
    const section = sections(bytes).values;
    const bits = Array.from(section, (b) => b.toString(2).padStart(8, '0')).join('');
    const expected =
      '0011111111110000'.padEnd(64, '0') + // first value raw
      '0' + // 1.0 again: XOR zero
      '11' +
      '00001' +
      '001011' +
      '11111111111' + // 2.0: XOR 0x7FF0...: 1 leading zero, 11 meaningful bits
      '11' +
      '01100' +
      '000001' +
      '1' + // 3.0: XOR 0x0008...: 12 leading, 51 trailing: outside the window
      '11' +
      '00000' +
      '001101' +
      '1100000000001'; // -0: XOR 0xC008...: 0 leading zeros, 13 meaningful
    expect(bits).toBe(expected.padEnd(section.length * 8, '0'));
  });

  it('writes times as zigzag varint delta-of-delta with a run of zeros', () => {
    // Protocol Buffers encoding guide: first delta 60e6 µs, zigzag 120e6, LEB128 bytes worked by hand.
    const bytes = encodeBlock(columns([0, 60e6, 120e6, 180e6], [1, 1, 1, 1]));
    expect(Array.from(sections(bytes).times)).toEqual([0, 0x80, 0x9c, 0x9c, 0x39, 0, 1]);
  });
});

describe('bad input and damaged blocks', () => {
  it('encodeBlock refuses mismatched lengths, unsafe or decreasing times, untyped columns', () => {
    expect(codeOf(() => encodeBlock(columns([1, 2], [1])))).toBe('CODEC_BAD_INPUT');
    expect(codeOf(() => encodeBlock(columns([1, 1.5], [1, 2])))).toBe('CODEC_BAD_INPUT');
    expect(codeOf(() => encodeBlock(columns([1, Number.NaN], [1, 2])))).toBe('CODEC_BAD_INPUT');
    expect(codeOf(() => encodeBlock(columns([1, 2 ** 53], [1, 2])))).toBe('CODEC_BAD_INPUT');
    expect(codeOf(() => encodeBlock(columns([2, 1], [1, 2])))).toBe('CODEC_BAD_INPUT');
    const untyped = { times: [1], values: [1], qualities: [192] } as unknown as SampleColumns;
    expect(codeOf(() => encodeBlock(untyped))).toBe('CODEC_BAD_INPUT');
  });

  it('the error names what was wrong', () => {
    try {
      encodeBlock(columns([5, 3], [1, 2]));
    } catch (e) {
      expect(e).toBeInstanceOf(CodecError);
      expect((e as CodecError).details).toMatchObject({ index: 1, time: 3, previous: 5 });
      expect((e as CodecError).message).toContain('sort the samples');
    }
    expect.assertions(3);
  });

  it('an empty input is truncated, another version is refused', () => {
    expect(codeOf(() => decodeBlock(new Uint8Array(0)))).toBe('CODEC_TRUNCATED');
    expect(codeOf(() => blockCount(new Uint8Array(0)))).toBe('CODEC_TRUNCATED');
    expect(codeOf(() => decodeBlock(Uint8Array.from([2, 0])))).toBe('CODEC_BAD_VERSION');
    expect(codeOf(() => blockCount(Uint8Array.from([0, 0])))).toBe('CODEC_BAD_VERSION');
  });

  it('every cut of a valid block throws, and so do trailing bytes', () => {
    for (const c of [
      columns(
        minutes(50),
        Array.from({ length: 50 }, (_, i) => Math.sqrt(i)),
      ),
      columns(
        minutes(50),
        Array.from({ length: 50 }, (_, i) => i / 100),
      ),
    ]) {
      const bytes = encodeBlock(c);
      for (let cut = 0; cut < bytes.length; cut++) {
        expect(codeOf(() => decodeBlock(bytes.subarray(0, cut)))).toMatch(/^CODEC_(TRUNCATED|CORRUPT)$/);
      }
      const longer = new Uint8Array(bytes.length + 1);
      longer.set(bytes);
      expect(codeOf(() => decodeBlock(longer))).toBe('CODEC_CORRUPT');
    }
  });

  it('a count the value section cannot hold is refused before allocating', () => {
    const bytes = encodeBlock(columns([0], [1]));
    const huge = Uint8Array.from([bytes[0]!, 0xff, 0xff, 0xff, 0xff, 0x0f, ...bytes.subarray(2)]);
    expect(codeOf(() => decodeBlock(huge))).toBe('CODEC_CORRUPT');
  });
});
