import { checkBand, stepBand } from '@isentrope/monitor';
import { describe, expect, it } from 'vitest';
import { DEFAULT_BANDS, driftBandConfig, faultBandConfig, faultsByKey, MACHINE_FAULT_KEY } from './config.js';

describe('fault flags', () => {
  it('group by tag role, machine-wide faults apart, notes ignored', () => {
    const m = faultsByKey([
      'fault:stuck:outletPressure',
      'fault:spike:outletPressure',
      'fault:gauge-absolute-suspect:inletPressure',
      'fault:second-law-violation',
      'fault:outlet-below-inlet:machine',
      'not-steady',
      'stale:massFlow',
    ]);
    expect(Object.fromEntries(m)).toEqual({
      'instrument:outletPressure': ['stuck', 'spike'],
      'instrument:inletPressure': ['gauge-absolute-suspect'],
      [MACHINE_FAULT_KEY]: ['second-law-violation', 'outlet-below-inlet'],
    });
  });
});

describe('band configs', () => {
  it('drift bands are losses below zero with k = 2 when asked, valid for the monitor', () => {
    const b = { ...DEFAULT_BANDS.turbine!, requireBeyondUncertainty: true };
    const c = driftBandConfig(b);
    expect(() => checkBand(c)).not.toThrow();
    expect([c.direction, c.warning, c.alarm, c.k, c.onDelayMs]).toEqual(['low', -2, -4, 2, 900_000]);
    expect(driftBandConfig({ ...b, requireBeyondUncertainty: false }).k).toBe(0);
    // -2.5 points with u = 1.5 point: |d| < 2u, not significant, stays normal (GUM k = 2).
    const s = stepBand({ severity: 'normal' }, { t: 0, value: -2.5, u: 1.5 }, { ...c, onDelayMs: 0 });
    expect(s.to).toBe('normal');
  });

  it('a fault band raises on 1 after the on-delay and clears on 0 after the off-delay', () => {
    const c = faultBandConfig({ ...DEFAULT_BANDS.pump!, onDelayS: 120, offDelayS: 60 });
    expect(() => checkBand(c)).not.toThrow();
    let st = stepBand({ severity: 'normal' }, { t: 0, value: 1 }, c).state;
    st = stepBand(st, { t: 60_000, value: 1 }, c).state;
    expect(st.severity).toBe('normal');
    st = stepBand(st, { t: 120_000, value: 1 }, c).state;
    expect(st.severity).toBe('alarm');
    st = stepBand(st, { t: 180_000, value: 0 }, c).state;
    expect(st.severity).toBe('alarm');
    st = stepBand(st, { t: 240_000, value: 0 }, c).state;
    expect(st.severity).toBe('normal');
  });
});
