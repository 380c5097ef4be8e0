import { describe, expect, it } from 'vitest';
import { backoffMs, signBody } from './sender.js';

describe('signBody', () => {
  it('is HMAC-SHA256 in hex: RFC 4231 test case 2', () => {
    // RFC 4231, section 4.3: key "Jefe", data "what do ya want for nothing?".
    expect(signBody('what do ya want for nothing?', 'Jefe')).toBe(
      'sha256=5bdcc146bf60754e6a042426089575c75a003f089d2739839dec58b964ec3843',
    );
  });
});

describe('backoffMs', () => {
  it('doubles from the base and stops at the cap (common practice, no source)', () => {
    expect([1, 2, 3, 4].map((a) => backoffMs(a, 30_000, 100_000))).toEqual([
      30_000, 60_000, 100_000, 100_000,
    ]);
  });
});
