/**
 * The instrument step's plan against the stored findings (instrument.ts), on invented steps. The
 * rules (a step within one detector window is the same step; a step back ends a standing finding;
 * a real change stays dismissed) are common practice, no source.
 */
import type { GaugeAbsoluteFinding } from '@isentrope/monitor';
import { describe, expect, it } from 'vitest';
import { type CrossCheck, type KnownFinding, planFindings } from './instrument.js';

const MIN = 60_000;
const O = { stepMs: MIN, windowPoints: 15 };
const MIXUP: CrossCheck = { verdict: 'mix-up', detail: {} };
const REAL: CrossCheck = { verdict: 'consistent', detail: {} };

function step(at: number, revertsAt?: number): GaugeAbsoluteFinding {
  return {
    index: 0,
    at,
    direction: revertsAt === undefined ? 'reads-high' : 'reads-low',
    likelyCause: 'absolute transmitter on a gauge tag',
    shift: 101_325,
    shiftInAmbients: 1,
    levelBefore: 5e5,
    levelAfter: 6.01e5,
    ...(revertsAt === undefined ? {} : { revertsAt }),
  };
}

describe('planFindings', () => {
  it('stores a new step as standing, changing the rows from it on', () => {
    const plan = planFindings([], [step(1000 * MIN)], () => MIXUP, O);
    expect(plan.inserts.map((n) => [n.finding.at, n.status, n.endedAt])).toEqual([
      [1000 * MIN, 'standing', null],
    ]);
    expect(plan.reverts).toEqual([]);
    expect(plan.changedFromMs).toBe(1000 * MIN);
  });

  it('stores a real change as dismissed, changing no rows', () => {
    const plan = planFindings([], [step(1000 * MIN)], () => REAL, O);
    expect(plan.inserts.map((n) => n.status)).toEqual(['dismissed']);
    expect(plan.changedFromMs).toBeUndefined();
  });

  it('leaves a step seen before alone (within one detector window of a stored step or its end)', () => {
    const stored: KnownFinding[] = [{ id: 1, at: 1000 * MIN, endedAt: 1200 * MIN, status: 'reverted' }];
    const plan = planFindings(stored, [step(1010 * MIN), step(1195 * MIN)], () => MIXUP, O);
    expect(plan).toEqual({ inserts: [], reverts: [], changedFromMs: undefined });
  });

  it('ends a stored standing finding at the step back, changing the rows from there on', () => {
    const stored: KnownFinding[] = [{ id: 4, at: 1000 * MIN, endedAt: null, status: 'standing' }];
    const plan = planFindings(stored, [step(1500 * MIN, 1000 * MIN)], () => MIXUP, O);
    expect(plan.reverts).toEqual([{ id: 4, endedAt: 1500 * MIN }]);
    expect(plan.inserts).toEqual([]);
    expect(plan.changedFromMs).toBe(1500 * MIN);
  });

  it('ignores the return of a dismissed (real) change', () => {
    const stored: KnownFinding[] = [{ id: 2, at: 1000 * MIN, endedAt: null, status: 'dismissed' }];
    const plan = planFindings(stored, [step(1500 * MIN, 1000 * MIN)], () => MIXUP, O);
    expect(plan).toEqual({ inserts: [], reverts: [], changedFromMs: undefined });
  });

  it('stores a step and its step back within one window as one reverted finding', () => {
    const plan = planFindings([], [step(1000 * MIN), step(1360 * MIN, 1000 * MIN)], () => MIXUP, O);
    expect(plan.inserts.map((n) => [n.judged, n.status, n.endedAt])).toEqual([
      ['standing', 'reverted', 1360 * MIN],
    ]);
    expect(plan.reverts).toEqual([]);
    expect(plan.changedFromMs).toBe(1000 * MIN);
  });
});
