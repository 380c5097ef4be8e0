/**
 * Keeps each write to the store within a bounded span of time. The store creates the monthly
 * partitions covering a batch's whole span, from its earliest to its latest sample, and refuses a
 * span needing more than 400 new ones (packages/store partitions.ts): one plausible 1975 sample
 * sent beside 2026 ones would fail the whole batch, and a resend would fail the same way.
 * Samples are therefore written in groups of at most MAX_WRITE_SPAN_MS each.
 */
import type { Sample, SampleSink } from './types.js';

/** 366 days: at most 14 monthly partitions per group (common practice, no source). */
export const MAX_WRITE_SPAN_MS = 366 * 86_400_000;

export interface Span {
  readonly lo: number;
  readonly hi: number;
}

export function spanOf(samples: readonly Sample[]): Span {
  let lo = Number.POSITIVE_INFINITY;
  let hi = Number.NEGATIVE_INFINITY;
  for (const s of samples) {
    const t = s.time.getTime();
    if (t < lo) lo = t;
    if (t > hi) hi = t;
  }
  return { lo, hi };
}

/**
 * The samples in groups, each spanning at most maxSpanMs; one group (the same array) in the
 * usual case. Groups are in time order; samples of one time keep the order they came in.
 */
export function groupsBySpan(
  samples: readonly Sample[],
  maxSpanMs = MAX_WRITE_SPAN_MS,
): (readonly Sample[])[] {
  const { lo, hi } = spanOf(samples);
  if (!(hi - lo > maxSpanMs)) return [samples];
  // Array.prototype.sort is stable (ECMAScript 2019), so repeated keys keep their order.
  const byTime = [...samples].sort((a, b) => a.time.getTime() - b.time.getTime());
  const groups: Sample[][] = [];
  let start = Number.NEGATIVE_INFINITY;
  for (const s of byTime) {
    const t = s.time.getTime();
    if (t - start > maxSpanMs) {
      groups.push([]);
      start = t;
    }
    groups[groups.length - 1]!.push(s);
  }
  return groups;
}

/**
 * A sink in front of a buffering one (the store's SampleWriter): it flushes the inner sink
 * before a write would widen the span of the rows buffered since the last flush beyond the bound.
 */
export class SpanLimitedSink implements SampleSink {
  private lo = Number.POSITIVE_INFINITY;
  private hi = Number.NEGATIVE_INFINITY;

  constructor(
    private readonly inner: SampleSink,
    private readonly maxSpanMs = MAX_WRITE_SPAN_MS,
  ) {}

  async write(samples: readonly Sample[]): Promise<void> {
    for (const group of groupsBySpan(samples, this.maxSpanMs)) {
      const span = spanOf(group);
      const lo = Math.min(this.lo, span.lo);
      const hi = Math.max(this.hi, span.hi);
      if (hi - lo > this.maxSpanMs) {
        await this.flush();
        this.lo = span.lo;
        this.hi = span.hi;
      } else {
        this.lo = lo;
        this.hi = hi;
      }
      await this.inner.write(group);
    }
  }

  async flush(): Promise<void> {
    this.lo = Number.POSITIVE_INFINITY;
    this.hi = Number.NEGATIVE_INFINITY;
    await this.inner.flush();
  }

  async close(): Promise<void> {
    await this.inner.close?.();
  }
}
