import { describe, expect, it } from 'vitest';
import { bandOnsetMs, runStartOfDays } from './condition-since.js';
import { isoSeconds } from './times.js';

const DAY = 86_400_000;

// Day means below are invented; the rule (an unbroken run ending with the last day) is the
// module's own definition.
describe('runStartOfDays', () => {
  const days = [0, 1, 2, 3, 4, 5].map((d) => d * DAY);
  it('gives the first day of the run that ends with the last day', () => {
    expect(runStartOfDays(days, [0, -5, -1, -4.5, -6, -4.2], -4)).toBe(3 * DAY);
  });
  it('counts from the last crossing when the drift went back inside', () => {
    expect(runStartOfDays(days, [-5, -5, -3.9, -5, -5, -5], -4)).toBe(3 * DAY);
  });
  it('is undefined when the last day is not beyond the level (a day on the level is not beyond)', () => {
    expect(runStartOfDays(days, [-5, -5, -5, -5, -5, -4], -4)).toBeUndefined();
    expect(runStartOfDays([], [], -4)).toBeUndefined();
  });
  it('takes every day when all are beyond', () => {
    expect(runStartOfDays(days, [-5, -5, -5, -5, -5, -5], -4)).toBe(0);
  });
});

describe('bandOnsetMs', () => {
  it('is the start of the delay the band waited out', () => {
    expect(
      bandOnsetMs({ severity: 'normal', pending: { severity: 'alarm', sinceMs: 100 } }, 'alarm', 900),
    ).toBe(100);
    expect(
      bandOnsetMs({ severity: 'warning', pending: { severity: 'alarm', sinceMs: 100 } }, 'alarm', 900),
    ).toBe(100);
  });
  it('is the step time with no delay pending on that side', () => {
    expect(bandOnsetMs({ severity: 'normal' }, 'warning', 900)).toBe(900);
    expect(
      bandOnsetMs({ severity: 'warning', pending: { severity: 'normal', sinceMs: 100 } }, 'alarm', 900),
    ).toBe(900);
  });
});

describe('isoSeconds', () => {
  it('writes ISO 8601 without a .000 of whole seconds, keeping real milliseconds', () => {
    expect(isoSeconds(Date.UTC(2026, 6, 14))).toBe('2026-07-14T00:00:00Z');
    expect(isoSeconds(Date.UTC(2026, 6, 14, 0, 0, 1, 250))).toBe('2026-07-14T00:00:01.250Z');
  });
});
