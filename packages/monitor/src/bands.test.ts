import { describe, expect, it } from 'vitest';
import {
  type BandConfig,
  type BandState,
  checkBand,
  INITIAL_BAND_STATE,
  type Severity,
  stepBand,
} from './bands.js';
import { MonitorBadInputError } from './errors.js';
import { seededNormal } from './synthetic.js';

const MIN = 60_000;
const drift: BandConfig = { direction: 'low', warning: -2, alarm: -3, deadband: 0.5, k: 2 };

/** Run a band over (t, value, u) samples; returns the severity after each sample. */
function run(
  config: BandConfig,
  samples: { t: number; value: number; u?: number; coverage?: number }[],
): Severity[] {
  let s: BandState = INITIAL_BAND_STATE;
  return samples.map((x) => {
    s = stepBand(s, x, config).state;
    return s.severity;
  });
}

const minutes = (n: number, f: (i: number) => number, u = 0.5) =>
  Array.from({ length: n }, (_, i) => ({ t: i * MIN, value: f(i), u }));

describe('stepBand', () => {
  it('enters warning and alarm beyond the levels, leaves only past the deadband', () => {
    // Levels -2 / -3 points, deadband 0.5 (common practice, no source).
    const sev = run(
      drift,
      minutes(7, (i) => [-1, -2.2, -3.2, -2.8, -2.6, -2.4, -1.4][i]!),
    );
    expect(sev).toEqual(['normal', 'warning', 'alarm', 'alarm', 'alarm', 'warning', 'normal']);
  });

  it('fires only when the drift exceeds k times its uncertainty', () => {
    // -3.5 points with u = 2 is not different from zero at k = 2 (|-3.5| < 4); with u = 1.5 it is.
    expect(run(drift, [{ t: 0, value: -3.5, u: 2 }])).toEqual(['normal']);
    expect(run(drift, [{ t: 0, value: -3.5, u: 1.5 }])).toEqual(['alarm']);
    // 'beyond-level': -3.5 must lie below -3 by more than 2u.
    expect(run({ ...drift, uncertaintyTest: 'beyond-level' }, [{ t: 0, value: -3.5, u: 0.2 }])).toEqual([
      'alarm',
    ]);
    expect(run({ ...drift, uncertaintyTest: 'beyond-level' }, [{ t: 0, value: -3.5, u: 0.3 }])).toEqual([
      'warning',
    ]);
  });

  it('on-delay holds exactly: fires at the first sample at least the delay after the condition began', () => {
    // Condition from minute 10; on-delay 5 min -> alarm at minute 15, not 14 (common practice, no source).
    const sev = run(
      { ...drift, onDelayMs: 5 * MIN },
      minutes(20, (i) => (i < 10 ? -1 : -4)),
    );
    expect(sev.indexOf('alarm')).toBe(15);
    expect(sev.slice(10, 15).every((s) => s === 'normal')).toBe(true);
    // A 5.5-minute delay on a 1-minute grid: minute 16.
    expect(
      run(
        { ...drift, onDelayMs: 5.5 * MIN },
        minutes(20, (i) => (i < 10 ? -1 : -4)),
      ).indexOf('alarm'),
    ).toBe(16);
  });

  it('an interruption restarts the on-delay', () => {
    const sev = run(
      { ...drift, onDelayMs: 5 * MIN },
      minutes(25, (i) => (i < 10 ? -1 : i === 13 ? -1 : -4)),
    );
    expect(sev.indexOf('alarm')).toBe(19); // restarted at minute 14
  });

  it('off-delay holds exactly', () => {
    const sev = run(
      { ...drift, offDelayMs: 3 * MIN },
      minutes(20, (i) => (i < 5 ? -4 : -1)),
    );
    expect(sev.slice(0, 8).every((s) => s === 'alarm')).toBe(true);
    expect(sev[8]).toBe('normal'); // back from minute 5, off-delay 3 min
  });

  it('too little coverage neither raises nor clears, and restarts a pending delay', () => {
    const cfg = { ...drift, onDelayMs: 2 * MIN, minCoverage: 0.5 };
    const samples = minutes(8, () => -4).map((s, i) => ({ ...s, coverage: i === 1 ? 0.2 : 1 }));
    expect(run(cfg, samples)).toEqual([
      'normal',
      'normal',
      'normal',
      'normal',
      'alarm',
      'alarm',
      'alarm',
      'alarm',
    ]);
    expect(run(drift, [{ t: 0, value: Number.NaN }])).toEqual(['normal']);
  });

  it('a drift hovering at a band edge does not flap with deadband and delays', () => {
    // Invented: drift -3 +- 0.3 (sd) for a week of minutes. Bounded changes is the property; the
    // numbers are common practice, no source.
    const z = seededNormal(41);
    const samples = minutes(7 * 1440, () => -3 + 0.3 * z(), 0.2);
    const changes = (cfg: BandConfig) => {
      let s: BandState = INITIAL_BAND_STATE;
      let c = 0;
      for (const x of samples) {
        const r = stepBand(s, x, cfg);
        if (r.changed) c++;
        s = r.state;
      }
      return c;
    };
    const bare = changes({ direction: 'low', warning: -2, alarm: -3, k: 2 });
    const damped = changes({ ...drift, deadband: 1, onDelayMs: 15 * MIN, offDelayMs: 30 * MIN });
    expect(bare).toBeGreaterThan(1000); // without hysteresis it flaps
    expect(damped).toBeLessThanOrEqual(4);
  });

  it('direction high mirrors the logic (entropy generation)', () => {
    const cfg: BandConfig = {
      direction: 'high',
      warning: 5,
      alarm: 10,
      deadband: 1,
      uncertaintyTest: 'beyond-level',
    };
    expect(
      run(
        cfg,
        minutes(4, (i) => [1, 6, 11, 9.5][i]!, 0),
      ),
    ).toEqual(['normal', 'warning', 'alarm', 'alarm']);
  });

  it('rejects a warning level on the wrong side of the alarm level', () => {
    expect(() => checkBand({ direction: 'low', warning: -4, alarm: -3 })).toThrow(MonitorBadInputError);
    expect(() => checkBand({ ...drift, deadband: -1 })).toThrow(MonitorBadInputError);
    expect(() => checkBand(drift)).not.toThrow();
  });
});
