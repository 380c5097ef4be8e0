import { describe, expect, it } from 'vitest';
import type { CommittedSampleSink, Sample, WriteReport } from '../types.js';
import { storePushItems } from './outcome.js';

/** A store that answers with a fixed report, as the real one would for these samples. */
function answering(report: WriteReport): CommittedSampleSink & { given: Sample[] } {
  const given: Sample[] = [];
  return {
    given,
    async write(samples) {
      given.push(...samples);
      return report;
    },
    async flush() {},
  };
}

const t = new Date('2026-03-01T00:00:00Z');
const at = (ref: number, value: number, quality = 192, time = t): Sample => ({
  tagId: 1,
  time,
  value,
  quality,
  ref,
});

// Outcomes worked by hand from the rule "first stored value kept" (the store's rule, packages/store/src/write-outcomes.ts; common practice, no source).
describe('storePushItems', () => {
  it('judges repeats of a refused first item against the value the store kept', async () => {
    const sink = answering({
      stored: 0,
      duplicates: 0,
      conflicts: [
        { tagId: 1, time: t.getTime(), value: 7, quality: 192, storedValue: 5, storedQuality: 192, ref: 0 },
      ],
    });
    const r = await storePushItems(sink, 4, [at(0, 7), at(1, 5), at(2, 7), at(3, -0)], []);
    expect(sink.given.map((s) => s.ref)).toEqual([0]); // only the first of a key goes to the store
    expect(r.items).toEqual(['conflict', 'duplicate', 'conflict', 'conflict']);
    expect(r.conflicts.map((c) => [c.index, c.value, c.storedValue])).toEqual([
      [0, 7, 5],
      [2, 7, 5],
      [3, -0, 5],
    ]);
    expect([r.stored, r.duplicates]).toEqual([0, 1]);
  });

  it('tells stored from duplicate by duplicateRefs when the store names them', async () => {
    const t2 = new Date('2026-03-01T00:00:01Z');
    const sink = answering({ stored: 1, duplicates: 1, conflicts: [], duplicateRefs: [1] });
    const r = await storePushItems(
      sink,
      3,
      [at(0, 1, 192, t2), at(1, 2)],
      [{ index: 2, field: 'tag', problem: 'x' }],
    );
    expect(r.items).toEqual(['stored', 'duplicate', 'rejected']);
  });

  it('tells 0 from -0 (bit for bit)', async () => {
    const sink = answering({ stored: 1, duplicates: 0, conflicts: [] });
    const r = await storePushItems(sink, 2, [at(0, 0), at(1, -0)], []);
    expect(r.items).toEqual(['stored', 'conflict']);
  });
});
