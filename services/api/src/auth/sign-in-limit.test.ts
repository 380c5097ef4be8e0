import { describe, expect, it } from 'vitest';
import { createSignInLimiter } from './sign-in-limit.js';

describe('per-account sign-in limit', () => {
  it('stops an account after the failures allowed until its window has passed; success clears it', () => {
    let t = 0;
    const limiter = createSignInLimiter(() => t, { maxFailures: 3, windowMs: 1000 });
    for (let i = 0; i < 3; i++) {
      expect(limiter.retryAfterMs('Admin')).toBe(0);
      limiter.recordFailure('admin');
      t += 100;
    }
    expect(limiter.retryAfterMs('admin')).toBe(700); // window 0..1000 ms, now 300 ms
    expect(limiter.retryAfterMs('other')).toBe(0);
    t = 1000;
    expect(limiter.retryAfterMs('admin')).toBe(0);
    limiter.recordFailure('other');
    limiter.recordFailure('other');
    limiter.recordSuccess('other');
    limiter.recordFailure('other');
    expect(limiter.retryAfterMs('other')).toBe(0);
  });
});
