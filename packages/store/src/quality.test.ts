import { describe, expect, it } from 'vitest';
import { encodeSamples, PG_EPOCH_MS } from './copy-binary.js';
import { QUALITY_BAD, QUALITY_GOOD, QUALITY_UNCERTAIN, qualityClass } from './quality.js';

describe('OPC DA quality codes', () => {
  it('classifies by bits 7-6', () => {
    // OPC DA 3.0 quality flags: 0xC0 good, 0x40 uncertain, 0x00 bad; substatus and limit
    // bits below do not change the class (0xD8 = good, local override; 0x1C = bad, out of
    // service; 0x54 = uncertain, engineering units exceeded; 0x03 = bad, constant limit).
    expect([QUALITY_GOOD, QUALITY_UNCERTAIN, QUALITY_BAD]).toEqual([192, 64, 0]);
    expect([192, 0xd8, 0xff, 64, 0x54, 0, 0x1c, 0x03].map(qualityClass)).toEqual([
      'good',
      'good',
      'good',
      'uncertain',
      'uncertain',
      'bad',
      'bad',
      'bad',
    ]);
    // Bits 7-6 = 10 is not used by OPC DA: never good. Vendor bits above 7 are ignored.
    expect(qualityClass(0x80)).toBe('bad');
    expect(qualityClass(0x01c0)).toBe('good');
    // Not an OPC DA code at all: counted as bad, never as good (common practice, no source).
    expect([-64, 1.5, Number.NaN].map(qualityClass)).toEqual(['bad', 'bad', 'bad']);
  });
});

describe('binary COPY encoding', () => {
  it('writes the header, one tuple and the trailer as PostgreSQL 15 "COPY" Binary Format says', () => {
    const buf = encodeSamples([{ tagId: 7, time: PG_EPOCH_MS + 1, value: 1.5, quality: 192 }]);
    expect(buf.subarray(0, 11).toString('latin1')).toBe('PGCOPY\n\xff\r\n\0');
    expect(buf.readInt32BE(11)).toBe(0); // flags
    expect(buf.readInt32BE(15)).toBe(0); // header extension length
    expect(buf.readInt16BE(19)).toBe(4); // fields
    expect([buf.readInt32BE(21), buf.readInt32BE(25)]).toEqual([4, 7]);
    // 2000-01-01T00:00:00.001Z is 1000 microseconds after PostgreSQL's epoch.
    expect([buf.readInt32BE(29), buf.readBigInt64BE(33)]).toEqual([8, 1000n]);
    expect([buf.readInt32BE(41), buf.readDoubleBE(45)]).toEqual([8, 1.5]);
    expect([buf.readInt32BE(53), buf.readInt16BE(57)]).toEqual([2, 192]);
    expect(buf.readInt16BE(59)).toBe(-1);
    expect(buf.length).toBe(61);
  });

  it("encodes instants before 2000 in two's complement, and refuses out-of-range integers", () => {
    // 1969-07-20T20:17:40Z, counted by calendar arithmetic: 3 h 42 min 20 s left of 20 July, then
    // 11 + 31 + 30 + 31 + 30 + 31 = 164 whole days to 1970-01-01, so 164 x 86,400 + 13,340 s before 1970;
    // 1970 to 2000 is 30 years with 7 leap days (1972 ... 1996), 10,957 days.
    const before1970 = 164n * 86_400n + (3n * 3600n + 42n * 60n + 20n);
    const from1970To2000 = 10_957n * 86_400n;
    const t = Date.UTC(1969, 6, 20, 20, 17, 40);
    expect(BigInt(t)).toBe(-before1970 * 1000n); // our count agrees with the ECMAScript clock
    const buf = encodeSamples([{ tagId: 1, time: t, value: 0, quality: 0 }]);
    expect(buf.readBigInt64BE(33)).toBe(BigInt(t - PG_EPOCH_MS) * 1000n);
    expect(buf.readBigInt64BE(33)).toBe((-before1970 - from1970To2000) * 1_000_000n);
    expect(() => encodeSamples([{ tagId: 2 ** 31, time: t, value: 0, quality: 0 }])).toThrow(
      expect.objectContaining({ code: 'STORE_BAD_SAMPLE' }),
    );
    expect(() => encodeSamples([{ tagId: 1, time: t, value: 0, quality: 40_000 }])).toThrow(
      expect.objectContaining({ code: 'STORE_BAD_SAMPLE' }),
    );
  });
});
