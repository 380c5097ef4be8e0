/**
 * Failed sign-ins counted per account, whatever address they come from: many addresses guessing one
 * password are stopped here, while the per-address rate limit (PASSWORD_CHECK_RATE_LIMIT) stops one
 * address guessing many. Kept in memory per process: a restart forgets the counts, as it forgets the
 * per-address ones.
 */

/** 10 failed sign-ins per account in 15 minutes (common practice, no source). */
export const SIGN_IN_ACCOUNT_LIMIT = { maxFailures: 10, windowMs: 15 * 60_000 } as const;

/** Accounts tracked at most; beyond, the entries whose window has passed are dropped first. */
const MAX_TRACKED = 10_000;

interface Window {
  failures: number;
  /** When the window that began with the first failure ends [ms]. */
  endsAt: number;
}

export interface SignInLimiter {
  /** Milliseconds until this account may try again; 0 when it may now. */
  retryAfterMs(username: string): number;
  recordFailure(username: string): void;
  /** A successful sign-in clears the account's count. */
  recordSuccess(username: string): void;
}

export function createSignInLimiter(
  now: () => number,
  limit: { readonly maxFailures: number; readonly windowMs: number } = SIGN_IN_ACCOUNT_LIMIT,
): SignInLimiter {
  const windows = new Map<string, Window>();
  // Usernames are matched exactly by the database; lower-casing here only makes the count stricter.
  const key = (username: string) => username.toLowerCase();
  const current = (username: string): Window | undefined => {
    const w = windows.get(key(username));
    if (w !== undefined && w.endsAt <= now()) {
      windows.delete(key(username));
      return undefined;
    }
    return w;
  };
  const prune = () => {
    for (const [name, w] of windows) if (w.endsAt <= now()) windows.delete(name);
    // Still full (a flood of distinct names): forget the oldest windows rather than grow without bound.
    for (const name of windows.keys()) {
      if (windows.size < MAX_TRACKED) break;
      windows.delete(name);
    }
  };
  return {
    retryAfterMs(username) {
      const w = current(username);
      return w !== undefined && w.failures >= limit.maxFailures ? w.endsAt - now() : 0;
    },
    recordFailure(username) {
      const w = current(username);
      if (w !== undefined) w.failures += 1;
      else {
        if (windows.size >= MAX_TRACKED) prune();
        windows.set(key(username), { failures: 1, endsAt: now() + limit.windowMs });
      }
    },
    recordSuccess(username) {
      windows.delete(key(username));
    },
  };
}
