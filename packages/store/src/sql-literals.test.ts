import { describe, expect, it } from 'vitest';
import { floatText, sqlFloatArray, sqlTime } from './sql-literals.js';

describe('SQL literals for the simple query protocol', () => {
  it('spells every double so that it reads back bit for bit', () => {
    // Extremes of IEEE 754 binary64 (smallest denormal, largest finite) and 0.1 + 0.2,
    // whose shortest round-trip text has 17 digits; ECMA-262 Number::toString.
    const values = [5e-324, 1.7976931348623157e308, 0.1 + 0.2, -123.456, 2 ** 53 + 2];
    for (const v of values) expect(Object.is(Number(floatText(v)), v)).toBe(true);
    expect(floatText(0.1 + 0.2)).toBe('0.30000000000000004');
    // String(-0) is "0"; the literal must keep the sign.
    expect(floatText(-0)).toBe('-0');
    expect(Object.is(Number(floatText(-0)), -0)).toBe(true);
    expect(sqlFloatArray([1.5, -0])).toBe("'{1.5,-0}'::float8[]");
  });

  it('writes instants to the millisecond in UTC', () => {
    // Hand-written from the date; common practice, no source.
    expect(sqlTime(Date.UTC(1969, 6, 20, 20, 17, 40, 1))).toBe("'1969-07-20T20:17:40.001Z'::timestamptz");
  });
});
