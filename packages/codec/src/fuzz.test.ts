/**
 * Fuzz tests with a seeded generator (so a failure repeats): random series of random shapes
 * round-trip bit for bit; random damage to valid blocks either throws CodecError or decodes to
 * columns of one length with sorted safe times, and never throws anything else or hangs.
 */
import { describe, expect, it } from 'vitest';
import { blockCount, decodeBlock, encodeBlock } from './block.js';
import type { SampleColumns } from './columns.js';
import { CodecError } from './errors.js';
import { firstDifference, seeded, setBits } from './testing.js';

type Random = () => number;

const int = (random: Random, below: number) => Math.floor(random() * below);

function randomTimes(random: Random, n: number): Float64Array {
  const times = new Float64Array(n);
  const shape = int(random, 5);
  let t = (random() - 0.5) * 2 ** (shape === 4 ? 53 : 51);
  t = Math.max(-Number.MAX_SAFE_INTEGER, Math.round(t));
  const step = [1_000_000, 60_000_000, 0, int(random, 1e6), 1][shape]!;
  for (let i = 0; i < n; i++) {
    const jitter = shape === 3 ? int(random, 2000) - 1000 : 0;
    const gap = random() < 0.01 ? int(random, 2 ** (shape === 4 ? 52 : 40)) : 0; // huge gaps now and then
    t = Math.min(Number.MAX_SAFE_INTEGER, Math.max(t, t + step + jitter + gap));
    times[i] = t;
  }
  return times;
}

function randomValues(random: Random, n: number): Float64Array {
  const values = new Float64Array(n);
  const shape = int(random, 6);
  const decimals = int(random, 7);
  let v = (random() - 0.5) * 10 ** int(random, 8);
  for (let i = 0; i < n; i++) {
    if (shape === 0) {
      setBits(values, i, int(random, 2 ** 32), int(random, 2 ** 32)); // any pattern: NaNs, denormals
      continue;
    }
    if (shape === 1 && random() < 0.05) v = (random() - 0.5) * 1e3; // constant with steps
    if (shape === 2) v += (random() - 0.5) * 0.1; // random walk
    if (shape === 3) v = i % 2 === 0 ? v : -v;
    values[i] = shape === 4 ? Math.round(v * 10 ** decimals) / 10 ** decimals : v;
    if (shape === 4) v += (random() - 0.5) * 0.01;
    if (shape === 5) {
      const special = [Number.NaN, -0, Number.MIN_VALUE, Number.MAX_VALUE, Number.NEGATIVE_INFINITY, v];
      values[i] = special[int(random, special.length)]!;
    }
  }
  return values;
}

function randomQualities(random: Random, n: number): Int16Array {
  const qualities = new Int16Array(n);
  let q = 192;
  for (let i = 0; i < n; i++) {
    if (random() < 0.02) q = int(random, 65536) - 32768;
    qualities[i] = q;
  }
  return qualities;
}

function randomSeries(random: Random): SampleColumns {
  const n = random() < 0.1 ? int(random, 3) : int(random, random() < 0.1 ? 3000 : 300);
  return {
    times: randomTimes(random, n),
    values: randomValues(random, n),
    qualities: randomQualities(random, n),
  };
}

describe('codec fuzz', () => {
  it('round-trips 3000 random series bit for bit', () => {
    const random = seeded(16);
    const layouts = new Set<number>();
    for (let round = 0; round < 3000; round++) {
      const series = randomSeries(random);
      const bytes = encodeBlock(series);
      layouts.add(layoutByte(bytes));
      const back = decodeBlock(bytes);
      expect(blockCount(bytes)).toBe(series.times.length);
      expect(firstDifference(back.times, series.times)).toBe(-1);
      expect(firstDifference(back.values, series.values)).toBe(-1);
      expect(firstDifference(back.qualities, series.qualities)).toBe(-1);
    }
    // Every time mode (0 delta-of-delta, 1 raw) and value mode (0 XOR, 4 decimal) was exercised.
    expect([...layouts].sort()).toEqual([-1, 0, 1, 4, 5]);
  });

  it('damaged blocks throw CodecError or decode to consistent columns', () => {
    const random = seeded(1601);
    let threw = 0;
    for (let round = 0; round < 5000; round++) {
      const valid = encodeBlock(randomSeries(random));
      const bytes = damage(random, valid);
      try {
        const c = decodeBlock(bytes);
        expect(c.values.length).toBe(c.times.length);
        expect(c.qualities.length).toBe(c.times.length);
        expect(c.times.length).toBe(blockCount(bytes));
        for (let i = 0; i < c.times.length; i++) {
          if (!Number.isSafeInteger(c.times[i]) || (i > 0 && c.times[i]! < c.times[i - 1]!)) {
            throw new Error(`decoded time ${i} is unsafe or goes backwards`);
          }
        }
      } catch (e) {
        if (!(e instanceof CodecError)) throw e;
        expect(e.code).toMatch(/^CODEC_(TRUNCATED|CORRUPT|BAD_VERSION)$/);
        threw++;
      }
    }
    expect(threw).toBeGreaterThan(2500); // most damage is caught, not silently decoded
  });
});

/** The layout byte after the version and the count varint; -1 for an empty block. */
function layoutByte(bytes: Uint8Array): number {
  let at = 1;
  while (bytes[at]! >= 0x80) at++;
  return bytes[at + 1] ?? -1;
}

/** One random kind of damage: flipped bits, overwritten bytes, a cut, extra or missing bytes. */
function damage(random: Random, valid: Uint8Array): Uint8Array {
  const bytes = valid.slice();
  const at = int(random, bytes.length);
  switch (int(random, 5)) {
    case 0:
      for (let k = 1 + int(random, 3); k > 0; k--) bytes[int(random, bytes.length)]! ^= 1 << int(random, 8);
      return bytes;
    case 1:
      bytes[at] = int(random, 256);
      return bytes;
    case 2:
      return bytes.subarray(0, at);
    case 3:
      return Uint8Array.from([...bytes.subarray(0, at), int(random, 256), ...bytes.subarray(at)]);
    default:
      return Uint8Array.from([...bytes.subarray(0, at), ...bytes.subarray(at + 1)]);
  }
}
