import { describe, expect, it } from 'vitest';
import { numericValue } from './opcua.js';
import { isStorableValue, MAX_SAMPLE_MAGNITUDE } from './values.js';

describe('storable sample values', () => {
  it('keeps finite values up to the bound and refuses the rest', () => {
    expect(isStorableValue(-MAX_SAMPLE_MAGNITUDE)).toBe(true);
    expect(isStorableValue(0)).toBe(true);
    expect(isStorableValue(1e201)).toBe(false);
    expect(isStorableValue(Number.NaN)).toBe(false);
    expect(isStorableValue(Number.POSITIVE_INFINITY)).toBe(false);
    // Two values at the bound still sum to a finite double (IEEE 754 binary64 max about 1.8e308).
    expect(Number.isFinite(2 * MAX_SAMPLE_MAGNITUDE * 1e99)).toBe(true);
  });

  it('OPC UA payloads: a Double beyond the bound is no sample, booleans are 1/0', () => {
    expect(numericValue(1.5e308)).toBeUndefined();
    expect(numericValue(42.5)).toBe(42.5);
    expect(numericValue(true)).toBe(1);
    expect(numericValue(12n)).toBe(12);
    expect(numericValue('42')).toBeUndefined();
  });
});
