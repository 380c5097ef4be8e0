import { describe, expect, it } from 'vitest';
import { groupsBySpan, SpanLimitedSink } from './span.js';
import type { Sample, SampleSink } from './types.js';

const at = (iso: string, value: number): Sample => ({ tagId: 1, time: new Date(iso), value, quality: 192 });

// Groups worked by hand from the 366-day bound (common practice, no source).
describe('writes within a bounded span of time', () => {
  it('keeps a batch within the bound whole, and cuts a decades-wide one in time order', () => {
    const near = [at('2026-01-02T00:00:00Z', 1), at('2026-01-01T00:00:00Z', 2)];
    expect(groupsBySpan(near)[0]).toBe(near);
    const wide = [
      at('2026-01-01T00:00:00Z', 1),
      at('1975-06-01T00:00:00Z', 2),
      at('2026-01-01T00:00:00Z', 3),
    ];
    expect(groupsBySpan(wide).map((g) => g.map((s) => s.value))).toEqual([[2], [1, 3]]);
  });

  it('flushes a buffering sink before a write would widen its unflushed span beyond the bound', async () => {
    const calls: string[] = [];
    const inner: SampleSink = {
      async write(samples) {
        calls.push(`write ${samples.map((s) => s.value).join(',')}`);
      },
      async flush() {
        calls.push('flush');
      },
    };
    const sink = new SpanLimitedSink(inner);
    await sink.write([at('2026-01-01T00:00:00Z', 1)]);
    await sink.write([at('2026-02-01T00:00:00Z', 2)]);
    await sink.write([at('1975-01-01T00:00:00Z', 3)]);
    expect(calls).toEqual(['write 1', 'write 2', 'flush', 'write 3']);
  });
});
