import { describe, expect, it } from 'vitest';
import {
  LengthMismatchError,
  MonitorBadInputError,
  TooFewPointsError,
  UnsortedTimesError,
} from '../errors.js';
import { seededNormal } from '../synthetic.js';
import { checkAbsolutePressurePlausible, detectGaugeAbsoluteStep, runningMedian } from './gauge-absolute.js';

// The fault pattern (a lasting shift of one ambient pressure) is common practice, no source.
// Standard atmosphere 101 325 Pa: ISO 2533. Series below are invented test data.
const ATM = 101_325;
const MIN = 60_000;
const T0 = Date.UTC(2026, 0, 1);

/** 17 bar(a) with 0.02 bar noise (a demo-class transmitter), one reading a minute, plus `extra(i)`. */
function series(n: number, extra: (i: number) => number, seed = 7) {
  const z = seededNormal(seed);
  const t = new Float64Array(n);
  const value = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    t[i] = T0 + i * MIN;
    value[i] = 17e5 + 2000 * z() + extra(i);
  }
  return { t, value, ambientPressure: ATM };
}

describe('runningMedian', () => {
  it('equals the brute-force median of each trailing window (common practice, no source)', () => {
    const z = seededNormal(3);
    const y = Float64Array.from({ length: 200 }, (_, i) => (i % 17 === 0 ? 5 : z()));
    for (const w of [1, 4, 15]) {
      const m = runningMedian(y, w);
      for (let j = 0; j < y.length; j++) {
        if (j < w - 1) {
          expect(m[j]).toBeNaN();
          continue;
        }
        const s = Array.from(y.subarray(j - w + 1, j + 1)).sort((a, b) => a - b);
        const h = w >> 1;
        const want = w % 2 === 1 ? s[h]! : (s[h - 1]! + s[h]!) / 2;
        expect(m[j]).toBe(want);
      }
    }
  });
});

describe('detectGaugeAbsoluteStep', () => {
  it('finds a +1.013 bar step on 17 bar(a) at its point, reading high', () => {
    const k = 1234;
    const found = detectGaugeAbsoluteStep(series(3000, (i) => (i >= k ? ATM : 0)));
    expect(found).toHaveLength(1);
    const f = found[0]!;
    expect(Math.abs(f.index - k)).toBeLessThanOrEqual(15); // within the window (default 15 points)
    expect(f.index).toBe(k); // noise 0.02 bar against a 1 bar step: the split is exact here
    expect(f.at).toBe(T0 + k * MIN);
    expect(f.direction).toBe('reads-high');
    expect(f.likelyCause).toBe('absolute transmitter on a gauge tag');
    // Median of 15 readings with sigma 2000 Pa: error well under 3000 Pa.
    expect(Math.abs(f.shift - ATM)).toBeLessThan(3000);
    expect(f.shiftInAmbients).toBeCloseTo(1, 1);
    expect(Math.abs(f.levelBefore - 17e5)).toBeLessThan(3000);
    expect(f.revertsAt).toBeUndefined();
  });

  it('finds a -1.013 bar step and reports it reading low', () => {
    const found = detectGaugeAbsoluteStep(series(3000, (i) => (i >= 2000 ? -ATM : 0)));
    expect(found).toHaveLength(1);
    expect(found[0]!.index).toBe(2000);
    expect(found[0]!.direction).toBe('reads-low');
    expect(found[0]!.likelyCause).toBe('gauge transmitter on an absolute tag');
    expect(Math.abs(found[0]!.shift + ATM)).toBeLessThan(3000);
  });

  it('does not report a +0.5 bar step (a real process change), nor a 3 bar one', () => {
    expect(detectGaugeAbsoluteStep(series(3000, (i) => (i >= 1500 ? 0.5e5 : 0)))).toEqual([]);
    expect(detectGaugeAbsoluteStep(series(3000, (i) => (i >= 1500 ? 3e5 : 0)))).toEqual([]);
  });

  it('keeps to the tolerance band: 0.9 ambient counts, 1.2 ambient does not (default 0.15)', () => {
    expect(detectGaugeAbsoluteStep(series(3000, (i) => (i >= 1500 ? 0.9 * ATM : 0)))).toHaveLength(1);
    expect(detectGaugeAbsoluteStep(series(3000, (i) => (i >= 1500 ? 1.2 * ATM : 0)))).toEqual([]);
    // A wider tolerance takes the 1.2 ambient step.
    expect(
      detectGaugeAbsoluteStep(
        series(3000, (i) => (i >= 1500 ? 1.2 * ATM : 0)),
        { tolerance: 0.25 },
      ),
    ).toHaveLength(1);
  });

  it('gives nothing on noise alone, a slow ramp or a slow swing', () => {
    expect(detectGaugeAbsoluteStep(series(5000, () => 0))).toEqual([]);
    // +3 bar over 5000 minutes.
    expect(detectGaugeAbsoluteStep(series(5000, (i) => (3e5 * i) / 5000))).toEqual([]);
    // A 1.5 bar amplitude swing over 6 hours.
    expect(detectGaugeAbsoluteStep(series(5000, (i) => 1.5e5 * Math.sin((2 * Math.PI * i) / 360)))).toEqual(
      [],
    );
  });

  it('finds the step on top of a slow swing (the local slope is fitted)', () => {
    const swing = (i: number) => 0.4e5 * Math.sin((2 * Math.PI * i) / 360);
    // At i = 1440 the swing is at its steepest rising phase (1440 / 360 = 4 periods).
    const found = detectGaugeAbsoluteStep(series(3000, (i) => swing(i) + (i >= 1440 ? ATM : 0)));
    expect(found).toHaveLength(1);
    expect(found[0]!.index).toBe(1440);
    expect(Math.abs(found[0]!.shift - ATM)).toBeLessThan(5000);
  });

  it('gives nothing for a change of one atmosphere that is not abrupt (fast ramp, controller lag)', () => {
    const ramp = (i: number) => (i < 1500 ? 0 : i >= 1515 ? ATM : (ATM * (i - 1500)) / 15);
    expect(detectGaugeAbsoluteStep(series(3000, ramp))).toEqual([]);
    // A set-point raised by one atmosphere, reached with a 5-minute first-order lag.
    const lag = (i: number) => (i < 1500 ? 0 : ATM * (1 - Math.exp(-(i - 1500) / 5)));
    expect(detectGaugeAbsoluteStep(series(3000, lag))).toEqual([]);
    // The same with a 1-minute lag is abrupt at this sampling and is reported.
    const quick = (i: number) => (i < 1500 ? 0 : ATM * (1 - Math.exp(-(i - 1500) / 1)));
    expect(detectGaugeAbsoluteStep(series(3000, quick))).toHaveLength(1);
  });

  it('ignores a 1 bar spike of 2 points and a 1 bar excursion shorter than minPersistPoints', () => {
    expect(detectGaugeAbsoluteStep(series(3000, (i) => (i === 1500 || i === 1501 ? ATM : 0)))).toEqual([]);
    // 10 points high: the 15-point window medians see it, persistence (15 points) refuses it.
    expect(detectGaugeAbsoluteStep(series(3000, (i) => (i >= 1500 && i < 1510 ? ATM : 0)))).toEqual([]);
  });

  it('reports a lasting excursion as two steps, the second marked as reverting the first', () => {
    const found = detectGaugeAbsoluteStep(series(3000, (i) => (i >= 1000 && i < 1600 ? ATM : 0)));
    expect(found.map((f) => [f.index, f.direction])).toEqual([
      [1000, 'reads-high'],
      [1600, 'reads-low'],
    ]);
    expect(found[1]!.revertsAt).toBe(T0 + 1000 * MIN);
  });

  it('refuses a step that has not yet persisted at the end of the data', () => {
    const s = series(1000, (i) => (i >= 990 ? ATM : 0));
    expect(detectGaugeAbsoluteStep(s)).toEqual([]);
    expect(detectGaugeAbsoluteStep(s, { minPersistPoints: 5, windowPoints: 5 })).toHaveLength(1);
  });

  it('finds a step across a gap (transmitter swapped while out) at the first reading after it', () => {
    const s = series(3000, (i) => (i >= 1800 ? ATM : 0));
    for (let i = 1500; i < 1800; i++) s.value[i] = Number.NaN; // five hours missing
    const found = detectGaugeAbsoluteStep(s);
    expect(found).toHaveLength(1);
    expect(found[0]!.index).toBe(1800);
  });

  it('skips readings marked invalid', () => {
    const s = series(3000, (i) => (i >= 1500 && i < 1700 ? ATM : 0));
    const valid = new Uint8Array(3000).fill(1);
    valid.fill(0, 1500, 1700);
    expect(detectGaugeAbsoluteStep({ ...s, valid })).toEqual([]);
    expect(detectGaugeAbsoluteStep(s)).toHaveLength(2);
  });

  it('rejects bad input with typed errors carrying the values', () => {
    const s = series(100, () => 0);
    expect(() => detectGaugeAbsoluteStep({ ...s, ambientPressure: 1.013 })).toThrow(MonitorBadInputError);
    expect(() => detectGaugeAbsoluteStep({ ...s, ambientPressure: 101.3 })).toThrow(MonitorBadInputError);
    expect(() => detectGaugeAbsoluteStep(s, { windowPoints: 2 })).toThrow(MonitorBadInputError);
    expect(() => detectGaugeAbsoluteStep(s, { windowPoints: 7.5 })).toThrow(MonitorBadInputError);
    expect(() => detectGaugeAbsoluteStep(s, { tolerance: 0 })).toThrow(MonitorBadInputError);
    expect(() => detectGaugeAbsoluteStep(s, { tolerance: 0.6 })).toThrow(MonitorBadInputError);
    expect(() => detectGaugeAbsoluteStep(s, { minPersistPoints: 0 })).toThrow(MonitorBadInputError);
    expect(() => detectGaugeAbsoluteStep({ ...s, value: s.value.subarray(1) })).toThrow(LengthMismatchError);
    expect(() => detectGaugeAbsoluteStep({ ...s, valid: new Uint8Array(3) })).toThrow(LengthMismatchError);
    const back = Float64Array.from(s.t);
    back[50] = back[10]!;
    try {
      detectGaugeAbsoluteStep({ ...s, t: back });
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(UnsortedTimesError);
      expect((e as UnsortedTimesError).index).toBe(50);
    }
    try {
      detectGaugeAbsoluteStep(s, { windowPoints: 60 });
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(TooFewPointsError);
      expect((e as TooFewPointsError).have).toBe(100);
      expect((e as TooFewPointsError).need).toBe(120);
    }
  });
});

describe('checkAbsolutePressurePlausible', () => {
  it('calls an absolute pressure at or below zero implausible: a gauge transmitter on an absolute tag', () => {
    for (const v of [0, -500]) {
      const r = checkAbsolutePressurePlausible(v, { ambientPressure: ATM });
      expect(r.plausible).toBe(false);
      if (r.plausible) continue;
      expect(r.reason).toBe('not-positive');
      expect(r.likelyCause).toBe('gauge transmitter on an absolute tag');
      expect(r.valuePa).toBe(v);
    }
  });

  it('checks an inlet open to the atmosphere against 0.5 and 1.5 x ambient (ISO 2533 atmosphere)', () => {
    const ctx = { ambientPressure: ATM, atmosphericInlet: true };
    expect(checkAbsolutePressurePlausible(ATM - 800, ctx)).toEqual({ plausible: true });
    // Gauge transmitter (reads about 0 at the open inlet) on an absolute tag.
    const low = checkAbsolutePressurePlausible(-800 + 1, ctx);
    expect(low.plausible).toBe(false);
    const nearZero = checkAbsolutePressurePlausible(1200, ctx);
    expect(nearZero).toMatchObject({
      plausible: false,
      reason: 'atmospheric-inlet-low',
      likelyCause: 'gauge transmitter on an absolute tag',
    });
    // Absolute transmitter on a gauge tag: about 2 x ambient once the ambient is added.
    expect(checkAbsolutePressurePlausible(2 * ATM - 800, ctx)).toMatchObject({
      plausible: false,
      reason: 'atmospheric-inlet-high',
      likelyCause: 'absolute transmitter on a gauge tag',
    });
    // The bounds are inclusive.
    expect(checkAbsolutePressurePlausible(0.5 * ATM, ctx).plausible).toBe(true);
    expect(checkAbsolutePressurePlausible(1.5 * ATM, ctx).plausible).toBe(true);
    expect(checkAbsolutePressurePlausible(0.49 * ATM, ctx).plausible).toBe(false);
    expect(checkAbsolutePressurePlausible(1.51 * ATM, ctx).plausible).toBe(false);
  });

  it('leaves a pressurised point alone unless it is at or below zero', () => {
    expect(checkAbsolutePressurePlausible(17e5, { ambientPressure: ATM })).toEqual({ plausible: true });
    expect(checkAbsolutePressurePlausible(1200, { ambientPressure: ATM })).toEqual({ plausible: true });
    expect(checkAbsolutePressurePlausible(17e5, { ambientPressure: ATM, atmosphericInlet: false })).toEqual({
      plausible: true,
    });
  });

  it('rejects a non-finite value and an ambient not in Pa', () => {
    expect(() => checkAbsolutePressurePlausible(Number.NaN, { ambientPressure: ATM })).toThrow(
      MonitorBadInputError,
    );
    expect(() => checkAbsolutePressurePlausible(1e5, { ambientPressure: 1.013 })).toThrow(
      MonitorBadInputError,
    );
  });
});
