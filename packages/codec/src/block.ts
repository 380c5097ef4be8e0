/**
 * The sample block, format version 1. Layout (varint = unsigned LEB128, see varint.ts):
 *   version byte (1) | sample count n (varint)
 *   and when n > 0:
 *   layout byte: bits 0-1 time mode (0 delta-of-delta, 1 raw), bits 2-3 value mode (0 XOR, 1 decimal)
 *   [decimal mode: one byte, the decimals k]
 *   time section length (varint) | value section length (varint)
 *   time section | value section | quality section (the rest of the block)
 * Each section must be used exactly to its end; so must the block. The section lengths bound n
 * before anything is allocated: an XOR value section holds at least 64 + (n - 1) bits, a decimal
 * one at least n bytes.
 */
import { BitReader, BitWriter } from './bits.js';
import { checkColumns, type SampleColumns } from './columns.js';
import { decodeDecimal, encodeDecimal, findDecimals, MAX_DECIMALS } from './decimal-values.js';
import { CodecError, corrupt, truncated } from './errors.js';
import { decodeQualities, encodeQualities } from './qualities.js';
import { decodeTimes, encodeTimes, TIME_RAW, timeMode } from './timestamps.js';
import { ByteReader, ByteWriter } from './varint.js';
import { decodeXor, encodeXor, XOR_MAX_BITS_PER_VALUE } from './xor-values.js';

export const BLOCK_FORMAT_VERSION = 1;
const VALUE_XOR = 0;
const VALUE_DECIMAL = 1;

// Scratch buffers reused by every encode (encoding is synchronous, so they are never shared).
const timeScratch = new ByteWriter(1 << 12);
const decimalScratch = new ByteWriter(1 << 12);
const qualityScratch = new ByteWriter(64);
const xorScratch = new BitWriter(1 << 12);

interface EncodedValues {
  readonly mode: number;
  readonly decimals: number;
  readonly bytes: Uint8Array;
}

/** Gorilla XOR by default; decimal scaling only where it is exact and smaller. */
function encodeValues(values: Float64Array): EncodedValues {
  const n = values.length;
  const k = findDecimals(values);
  decimalScratch.pos = 0;
  const decimal = k >= 0 && encodeDecimal(values, k, decimalScratch);
  xorScratch.reset(64 + XOR_MAX_BITS_PER_VALUE * n);
  const budget = decimal ? decimalScratch.pos * 8 : Number.POSITIVE_INFINITY;
  if (encodeXor(values, xorScratch, budget))
    return { mode: VALUE_XOR, decimals: 0, bytes: xorScratch.finish() };
  return { mode: VALUE_DECIMAL, decimals: k, bytes: decimalScratch.view() };
}

/** Encodes one tag's samples losslessly; throws CodecError (CODEC_BAD_INPUT) on bad columns. */
export function encodeBlock(columns: SampleColumns): Uint8Array {
  checkColumns(columns);
  const n = columns.times.length;
  const header = new ByteWriter(32);
  header.byte(BLOCK_FORMAT_VERSION);
  header.unsigned(n);
  if (n === 0) return header.view().slice();
  const mode = timeMode(columns.times);
  timeScratch.pos = 0;
  encodeTimes(columns.times, mode, timeScratch);
  const values = encodeValues(columns.values);
  qualityScratch.pos = 0;
  encodeQualities(columns.qualities, qualityScratch);
  header.byte(mode | (values.mode << 2));
  if (values.mode === VALUE_DECIMAL) header.byte(values.decimals);
  header.unsigned(timeScratch.pos);
  header.unsigned(values.bytes.length);
  const parts = [header.view(), timeScratch.view(), values.bytes, qualityScratch.view()];
  const out = new Uint8Array(parts.reduce((sum, p) => sum + p.length, 0));
  let at = 0;
  for (const p of parts) {
    out.set(p, at);
    at += p.length;
  }
  return out;
}

function readVersion(r: ByteReader): void {
  const version = r.byte();
  if (version !== BLOCK_FORMAT_VERSION) {
    throw new CodecError(
      'CODEC_BAD_VERSION',
      `Sample block has format version ${version}; this codec reads version ${BLOCK_FORMAT_VERSION} (update the codec, or the block is not a sample block).`,
      { version, supported: [BLOCK_FORMAT_VERSION] },
    );
  }
}

/** The sample count from the header, without decoding. */
export function blockCount(bytes: Uint8Array): number {
  const r = new ByteReader(bytes, 0, bytes.length, 'header');
  readVersion(r);
  return r.unsigned();
}

interface Layout {
  readonly timeMode: number;
  readonly valueMode: number;
  readonly decimals: number;
  readonly timeStart: number;
  readonly valueStart: number;
  readonly qualityStart: number;
}

function readLayout(r: ByteReader, n: number): Layout {
  const layout = r.byte();
  const timeMode = layout & 3;
  const valueMode = (layout >>> 2) & 3;
  if (layout > 15 || timeMode > TIME_RAW || valueMode > VALUE_DECIMAL) {
    throw corrupt('header', 'unknown layout byte', { layout });
  }
  const decimals = valueMode === VALUE_DECIMAL ? r.byte() : 0;
  if (decimals > MAX_DECIMALS) throw corrupt('header', 'too many decimals', { decimals });
  const timeLength = r.unsigned();
  const valueLength = r.unsigned();
  const timeStart = r.pos;
  const valueStart = timeStart + timeLength;
  const qualityStart = valueStart + valueLength;
  if (qualityStart > r.end) throw truncated('header', { timeLength, valueLength, blockLength: r.end });
  const capacity = valueMode === VALUE_XOR ? valueLength * 8 - 63 : valueLength;
  if (n > capacity)
    throw corrupt('header', 'the sample count exceeds what the value section can hold', { n });
  return { timeMode, valueMode, decimals, timeStart, valueStart, qualityStart };
}

function expectEnd(r: ByteReader): void {
  if (r.pos !== r.end) throw corrupt(r.section, 'bytes are left over', { at: r.pos, end: r.end });
}

/** Decodes a block; throws CodecError (truncated, bad version, corrupt) on damaged input. */
export function decodeBlock(bytes: Uint8Array): SampleColumns {
  const header = new ByteReader(bytes, 0, bytes.length, 'header');
  readVersion(header);
  const n = header.unsigned();
  const columns = { times: new Float64Array(0), values: new Float64Array(0), qualities: new Int16Array(0) };
  if (n === 0) {
    expectEnd(header);
    return columns;
  }
  const layout = readLayout(header, n);
  columns.times = new Float64Array(n);
  columns.values = new Float64Array(n);
  columns.qualities = new Int16Array(n);
  const times = new ByteReader(bytes, layout.timeStart, layout.valueStart, 'times');
  decodeTimes(times, layout.timeMode, columns.times);
  expectEnd(times);
  if (layout.valueMode === VALUE_XOR) {
    const bits = new BitReader(bytes, layout.valueStart, layout.qualityStart, 'values (XOR)');
    decodeXor(bits, columns.values);
    bits.check();
    if (bits.bytesUsed(layout.valueStart) !== layout.qualityStart - layout.valueStart) {
      throw corrupt('values (XOR)', 'bytes are left over', { used: bits.bytesUsed(layout.valueStart) });
    }
  } else {
    const values = new ByteReader(bytes, layout.valueStart, layout.qualityStart, 'values (decimal)');
    decodeDecimal(values, layout.decimals, columns.values);
    expectEnd(values);
  }
  const qualities = new ByteReader(bytes, layout.qualityStart, bytes.length, 'qualities');
  decodeQualities(qualities, columns.qualities);
  expectEnd(qualities);
  return columns;
}
