import { describe, expect, it } from 'vitest';
import { CAUTION } from './caution.js';
import {
  LengthMismatchError,
  MONITOR_ERRORS,
  MonitorBadInputError,
  SingularFitError,
  TooFewPointsError,
  UnsortedTimesError,
} from './errors.js';

describe('errors', () => {
  it('every error class has a documented, distinct code and keeps its values', () => {
    const errors = [
      new MonitorBadInputError('stepMs', -1, 'must be positive'),
      new UnsortedTimesError('p', 3, 10, 5),
      new TooFewPointsError('fit', 2, 9),
      new LengthMismatchError('y', 3, 2),
      new SingularFitError('fit', 1, 2),
    ];
    const codes = errors.map((e) => e.code);
    expect(new Set(codes).size).toBe(codes.length);
    expect(codes.sort()).toEqual(Object.keys(MONITOR_ERRORS).sort());
    expect(errors[2]).toMatchObject({ have: 2, need: 9 });
    expect(errors[0]!.message).toContain('-1');
  });

  it('the caution text is exact', () => {
    expect(CAUTION).toBe(
      'Figures support, never replace, the judgement of qualified engineers; maintenance decisions rest with them; local codes and licensed practice prevail.',
    );
  });
});
