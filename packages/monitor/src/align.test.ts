import { describe, expect, it } from 'vitest';
import {
  ALIGN_BAD_EXCLUDED,
  ALIGN_MISSING,
  ALIGN_PARTIAL,
  ALIGN_STALE,
  ALIGN_UNCERTAIN,
  alignTags,
  QUALITY_BAD,
  toColumns,
} from './align.js';
import { MonitorBadInputError, UnsortedTimesError } from './errors.js';

const MIN = 60_000;

describe('alignTags: time-weighted sample-and-hold means', () => {
  it('averages held values over each interval (hand-computed)', () => {
    // Samples 1 @ 0 s, 3 @ 30 s, 5 @ 90 s. Interval [0,60): (1*30 + 3*30)/60 = 2.
    // Interval [60,120): 3 holds 60..90, 5 holds 90..120 -> (3*30 + 5*30)/60 = 4. Hand-computed.
    const tag = { role: 'p', t: [0, 30_000, 90_000], value: [1, 3, 5] };
    const a = alignTags([tag], { startMs: 0, endMs: 2 * MIN });
    const p = a.tags.get('p')!;
    expect(Array.from(a.t)).toEqual([0, MIN]);
    expect(p.value[0]).toBeCloseTo(2, 12);
    expect(p.value[1]).toBeCloseTo(4, 12);
    expect(Array.from(p.coverage)).toEqual([1, 1]);
    expect(p.flags[0]).toBe(0);
  });

  it('a sample taken before the grid holds into it; coverage counts only held time', () => {
    // 7 @ -30 s with maxAge 60 s holds until 30 s: coverage of [0,60) = 0.5, mean 7. Hand-computed.
    const a = alignTags([{ role: 'x', t: [-30_000], value: [7] }], { startMs: 0, endMs: MIN, maxAgeMs: MIN });
    const x = a.tags.get('x')!;
    expect(x.coverage[0]).toBeCloseTo(0.5, 12);
    expect(x.value[0]).toBe(7);
    expect(x.flags[0]! & ALIGN_PARTIAL).toBe(ALIGN_PARTIAL);
    // With minCoverage 0.6 the same point is missing.
    const b = alignTags([{ role: 'x', t: [-30_000], value: [7] }], {
      startMs: 0,
      endMs: MIN,
      maxAgeMs: MIN,
      minCoverage: 0.6,
    });
    expect(Number.isNaN(b.tags.get('x')!.value[0])).toBe(true);
    expect(b.tags.get('x')!.flags[0]! & ALIGN_MISSING).toBe(ALIGN_MISSING);
  });

  it('stale data: after maxAge the value stops holding and the points are missing and stale', () => {
    // One sample at 0, maxAge 2 min, nothing until 10 min. Common practice, no source.
    const a = alignTags([{ role: 'T', t: [0, 600_000], value: [300, 310] }], {
      startMs: 0,
      endMs: 11 * MIN,
      maxAgeMs: 2 * MIN,
    });
    const T = a.tags.get('T')!;
    expect(T.value[0]).toBe(300);
    expect(T.value[1]).toBe(300);
    expect(T.flags[1]! & ALIGN_STALE).toBe(0); // newest sample 2 min old at the end of [60,120): not older than maxAge
    for (let i = 2; i < 10; i++) {
      expect(Number.isNaN(T.value[i])).toBe(true);
      expect(T.flags[i]! & (ALIGN_MISSING | ALIGN_STALE)).toBe(ALIGN_MISSING | ALIGN_STALE);
    }
    expect(T.value[10]).toBe(310);
    expect(a.coverage[5]).toBe(0);
  });

  it('excludes and counts bad-quality samples; a bad sample ends the previous hold', () => {
    // good 10 @ 0, bad 999 @ 30 s, good 20 @ 60 s: [0,60) covered 0..30 only -> mean 10, coverage 0.5.
    const tag = toColumns('flow', [
      { t: 0, value: 10, quality: 'good' },
      { t: 30_000, value: 999, quality: 'bad' },
      { t: 60_000, value: 20, quality: 'good' },
      { t: 90_000, value: 22, quality: 'uncertain' },
    ]);
    expect(tag.quality?.[1]).toBe(QUALITY_BAD);
    const a = alignTags([tag], { startMs: 0, endMs: 2 * MIN });
    const f = a.tags.get('flow')!;
    expect(f.value[0]).toBe(10);
    expect(f.coverage[0]).toBeCloseTo(0.5, 12);
    expect(f.badCount[0]).toBe(1);
    expect(f.badTotal).toBe(1);
    expect(f.flags[0]! & ALIGN_BAD_EXCLUDED).toBe(ALIGN_BAD_EXCLUDED);
    expect(f.value[1]).toBeCloseTo(21, 12); // (20*30 + 22*30)/60, hand-computed
    expect(f.flags[1]! & ALIGN_UNCERTAIN).toBe(ALIGN_UNCERTAIN);
    const strict = alignTags([tag], { startMs: 0, endMs: 2 * MIN, acceptUncertain: false });
    expect(strict.tags.get('flow')!.value[1]).toBe(20);
    expect(strict.tags.get('flow')!.badTotal).toBe(2);
  });

  it('overall coverage is the smallest over the tags', () => {
    const a = alignTags(
      [
        { role: 'a', t: [0], value: [1] },
        { role: 'b', t: [45_000], value: [2] },
      ],
      { startMs: 0, endMs: MIN },
    );
    expect(a.coverage[0]).toBeCloseTo(0.25, 6);
  });

  it('matches a brute-force integration on irregular data', () => {
    // Cross-check against numerical integration at 1 ms resolution (common practice, no source).
    const t = [0, 7_000, 15_500, 61_000, 61_500, 130_000, 170_001];
    const v = [1, -2, 4, 8, 3, 6, 9];
    const a = alignTags([{ role: 'z', t, value: v }], { startMs: 0, endMs: 3 * MIN, maxAgeMs: 50_000 });
    for (let i = 0; i < 3; i++) {
      let sum = 0;
      let cov = 0;
      for (let ms = i * MIN; ms < (i + 1) * MIN; ms++) {
        let k = -1;
        for (let j = 0; j < t.length; j++) if (t[j]! <= ms) k = j;
        if (k >= 0 && ms < t[k]! + 50_000) {
          sum += v[k]!;
          cov++;
        }
      }
      expect(a.tags.get('z')!.value[i]).toBeCloseTo(sum / cov, 9);
      expect(a.tags.get('z')!.coverage[i]).toBeCloseTo(cov / MIN, 6);
    }
  });

  it('rejects unsorted samples and bad options with typed errors', () => {
    expect(() => alignTags([{ role: 'p', t: [10, 5], value: [1, 2] }], { startMs: 0, endMs: MIN })).toThrow(
      UnsortedTimesError,
    );
    expect(() => alignTags([], { startMs: 0, endMs: MIN, stepMs: 0 })).toThrow(MonitorBadInputError);
    expect(() =>
      alignTags(
        [
          { role: 'p', t: [], value: [] },
          { role: 'p', t: [], value: [] },
        ],
        { startMs: 0, endMs: MIN },
      ),
    ).toThrow(MonitorBadInputError);
  });
});
