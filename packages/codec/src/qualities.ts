/**
 * Qualities by run-length encoding (common practice, no source): each run as its value (zigzag
 * varint, Int16) and its length less one (varint). Quality rarely changes, so a block of good
 * samples costs two bytes.
 */
import { corrupt } from './errors.js';
import type { ByteReader, ByteWriter } from './varint.js';

const SECTION = 'qualities';

export function encodeQualities(qualities: Int16Array, w: ByteWriter): void {
  const n = qualities.length;
  let i = 0;
  while (i < n) {
    const q = qualities[i]!;
    let j = i + 1;
    while (j < n && qualities[j] === q) j++;
    w.signed(q);
    w.unsigned(j - i - 1);
    i = j;
  }
}

export function decodeQualities(r: ByteReader, out: Int16Array): void {
  const n = out.length;
  let i = 0;
  while (i < n) {
    const q = r.signed();
    if (q < -32768 || q > 32767) throw corrupt(SECTION, 'a quality is outside Int16', { index: i, q });
    const run = r.unsigned() + 1;
    if (run > n - i) throw corrupt(SECTION, 'a run passes the sample count', { index: i, run });
    out.fill(q, i, i + run);
    i += run;
  }
}
