import { describe, expect, it } from 'vitest';
import { alignTags } from './align.js';
import { LengthMismatchError, MonitorBadInputError } from './errors.js';
import { seededNormal } from './synthetic.js';
import {
  flagNames,
  movingStd,
  reasonsAt,
  VALID_BAD_QUALITY,
  VALID_MISSING,
  VALID_RANGE,
  VALID_SECOND_LAW,
  VALID_SPIKE,
  VALID_STUCK,
  validateAligned,
} from './validate.js';

const MIN = 60_000;

/** One sample per minute at the grid points, so aligned values equal the samples. */
function tag(role: string, value: number[]) {
  return { role, t: value.map((_, i) => i * MIN), value };
}

function noisy(seed: number, n: number, mean: number, sd: number): number[] {
  const z = seededNormal(seed);
  return Array.from({ length: n }, () => mean + sd * z());
}

describe('validateAligned', () => {
  it('flags values outside the valid range as instrument faults and invalid', () => {
    const a = alignTags([tag('p', [1e5, 2e5, 9e6, 1.5e5])], { startMs: 0, endMs: 4 * MIN });
    const v = validateAligned(a, [{ role: 'p', min: 0, max: 5e6, key: true }]);
    expect(Array.from(v.tags.get('p')!.flags, (f) => f & VALID_RANGE)).toEqual([0, 0, VALID_RANGE, 0]);
    expect(Array.from(v.valid)).toEqual([1, 1, 0, 1]);
    expect(Array.from(v.instrumentFault)).toEqual([0, 0, 1, 0]);
    expect(v.tags.get('p')!.counts.range).toBe(1);
    expect(reasonsAt(v, 2)).toEqual([
      { role: 'p', flag: 'range', text: 'value outside the valid range of the tag' },
    ]);
  });

  it('flags a stuck transmitter (identical values) only while another key tag moves', () => {
    // Invented data: 'T' frozen at 500 K from index 30 on; 'p' moves throughout. Common practice, no source.
    const n = 90;
    const p = noisy(1, n, 10e5, 2e3);
    const T = noisy(2, n, 500, 0.5).map((x, i) => (i >= 30 ? 500 : x));
    const a = alignTags([tag('p', p), tag('T', T)], { startMs: 0, endMs: n * MIN });
    const cfg = [
      { role: 'p', key: true, stuck: { window: 15, minStd: 10 } },
      { role: 'T', key: true, stuck: { window: 15, minStd: 0.01 } },
    ];
    const v = validateAligned(a, cfg);
    const stuckT = Array.from(v.tags.get('T')!.flags, (f) => (f & VALID_STUCK) !== 0);
    expect(stuckT.slice(0, 30).some(Boolean)).toBe(false);
    expect(stuckT.slice(30).every(Boolean)).toBe(true);
    expect(v.tags.get('p')!.counts.stuck).toBe(0);
    expect(v.instrumentFault[60]).toBe(1);
    expect(v.valid[60]).toBe(0);
    expect(flagNames(v.pointFlags[60]!)).toContain('stuck');

    // The whole machine at rest (every key tag flat): nobody is called stuck.
    const b = alignTags([tag('p', Array(n).fill(1e5)), tag('T', Array(n).fill(300))], {
      startMs: 0,
      endMs: n * MIN,
    });
    const w = validateAligned(b, cfg);
    expect(w.tags.get('T')!.counts.stuck).toBe(0);
    expect(w.tags.get('p')!.counts.stuck).toBe(0);
  });

  it('flags a flat line by standard deviation below the threshold (not only identical values)', () => {
    const n = 60;
    const p = noisy(3, n, 10e5, 2e3);
    const T = noisy(4, n, 500, 0.5).map((x, i) => (i >= 20 ? 500 + 1e-4 * (i % 2) : x));
    const a = alignTags([tag('p', p), tag('T', T)], { startMs: 0, endMs: n * MIN });
    const v = validateAligned(a, [
      { role: 'p', key: true, stuck: { window: 10, minStd: 10 } },
      { role: 'T', key: true, stuck: { window: 10, minStd: 0.01 } },
    ]);
    expect(v.tags.get('T')!.counts.stuck).toBe(n - 20);
  });

  it('finds a spike with the Hampel identifier and leaves plain noise alone', () => {
    // Hampel identifier, 3 x 1.4826 x MAD (Pearson 2002). With Gaussian noise and a 3-sigma rule a
    // few false hits per thousand are expected; a 20-sigma spike must be found.
    const n = 1000;
    const x = noisy(5, n, 50, 1);
    x[500] = 70;
    const a = alignTags([tag('flow', x)], { startMs: 0, endMs: n * MIN });
    const v = validateAligned(a, [{ role: 'flow', key: true, spike: { halfWindow: 5, nSigma: 3 } }]);
    const f = v.tags.get('flow')!;
    expect(f.flags[500]! & VALID_SPIKE).toBe(VALID_SPIKE);
    // An 11-point MAD is a noisy estimate of sigma, so false hits run several times the normal
    // 0.27 % tail beyond 3 sigma (Pearson 2002 discusses this); they must stay rare.
    expect(f.counts.spike).toBeLessThan(50);
    expect(f.flags[499]! & VALID_SPIKE).toBe(0);
    expect(f.flags[501]! & VALID_SPIKE).toBe(0);
  });

  it('the sliding Hampel matches a direct median/MAD computation, gaps included', () => {
    // Direct reference written out here (common practice, no source).
    const z = seededNormal(8);
    const x = Array.from({ length: 400 }, (_, i) =>
      i % 37 === 0 ? Number.NaN : Math.round(10 * z()) / 10 + (i % 50 === 7 ? 5 : 0),
    );
    const a = alignTags([tag('x', x)], { startMs: 0, endMs: 400 * MIN });
    const med = (v: number[]) => {
      const s = [...v].sort((p, q) => p - q);
      const k = s.length >> 1;
      return s.length % 2 === 1 ? s[k]! : (s[k - 1]! + s[k]!) / 2;
    };
    for (const h of [1, 2, 5]) {
      const v = validateAligned(a, [{ role: 'x', spike: { halfWindow: h, nSigma: 2.5 } }]);
      const got = Array.from(v.tags.get('x')!.flags, (f) => (f & VALID_SPIKE) !== 0);
      const want = x.map((xi, i) => {
        if (!Number.isFinite(xi)) return false;
        const w = x.slice(Math.max(0, i - h), i + h + 1).filter(Number.isFinite);
        if (w.length < 3) return false;
        const m = med(w);
        const d = Math.abs(xi - m);
        return d > 0 && d > 2.5 * 1.4826 * med(w.map((u) => Math.abs(u - m)));
      });
      expect(got).toEqual(want);
      expect(want.filter(Boolean).length).toBeGreaterThan(3);
    }
  });

  it('a clean step is not a spike', () => {
    const x = Array.from({ length: 40 }, (_, i) => (i < 20 ? 10 : 20));
    const a = alignTags([tag('x', x)], { startMs: 0, endMs: 40 * MIN });
    const v = validateAligned(a, [{ role: 'x', spike: {} }]);
    expect(v.tags.get('x')!.counts.spike).toBe(0);
  });

  it('carries bad quality and missing data from alignment; model faults are instrument faults', () => {
    const a = alignTags(
      [
        {
          role: 'p',
          t: [0, 30_000, 60_000, 120_000],
          value: [1, 2, 3, 4],
          quality: [0, 2, 0, 0],
        },
      ],
      { startMs: 0, endMs: 4 * MIN, maxAgeMs: MIN, minCoverage: 0.9 },
    );
    const v = validateAligned(a, [{ role: 'p', key: true }], { secondLaw: [0, 0, 1, 0] });
    const f = v.tags.get('p')!.flags;
    expect(f[0]! & (VALID_BAD_QUALITY | VALID_MISSING)).toBe(VALID_BAD_QUALITY | VALID_MISSING);
    expect(v.valid[1]).toBe(1);
    expect(v.pointFlags[2]! & VALID_SECOND_LAW).toBe(VALID_SECOND_LAW);
    expect(v.valid[2]).toBe(0);
    expect(v.instrumentFault[2]).toBe(1);
    expect(v.valid[3]).toBe(0); // the sample at 120 s has aged out by 180 s: missing
    expect(reasonsAt(v, 2).map((r) => [r.role, r.flag])).toEqual([[undefined, 'second-law']]);
    expect(() => validateAligned(a, [{ role: 'p' }], { impossible: [0] })).toThrow(LengthMismatchError);
    expect(() => validateAligned(a, [{ role: 'q' }])).toThrow(MonitorBadInputError);
  });

  it('movingStd equals a direct computation, also on a large offset', () => {
    const x = noisy(6, 50, 1e6, 0.1);
    const { std } = movingStd(x, 8);
    for (const i of [7, 20, 49]) {
      const w = x.slice(i - 7, i + 1);
      const m = w.reduce((s, v) => s + v, 0) / 8;
      const sd = Math.sqrt(w.reduce((s, v) => s + (v - m) ** 2, 0) / 8);
      expect(std[i]).toBeCloseTo(sd, 6); // common practice, no source
    }
    expect(Number.isNaN(std[6])).toBe(true);
  });
});
