import type { WriteConflict } from '@isentrope/store';
/** Samples as the ingest hands them to the store, and the sink that stores them. */

/**
 * Quality codes stored with each sample, as in OPC DA (OPC Data Access 2.05a, quality
 * bits QQ): Good = 192 (0xC0), Uncertain = 64 (0x40), Bad = 0. OPC UA status codes map by
 * their severity bits (OPC UA Part 4, 7.39: 00 good, 01 uncertain, 10/11 bad).
 */
export const QUALITY = { good: 192, uncertain: 64, bad: 0 } as const;

export interface Sample {
  readonly tagId: number;
  /** Sample time (UTC instant). */
  readonly time: Date;
  /** Value in the tag's own unit, as received. */
  readonly value: number;
  /** OPC DA quality code, see QUALITY. */
  readonly quality: number;
  /** The caller's reference (CSV: line number; push: item index), echoed in a conflict; never stored. */
  readonly ref?: number;
}

/**
 * Where samples go. Writes must be idempotent: a batch sent again never duplicates rows
 * (the store's SampleWriter and PgSampleSink both key on (tag_id, time)). A write resolves
 * only once the rows are committed.
 */
export interface SampleSink {
  /** Its result is the sink's own; a CommittedSampleSink resolves with a WriteReport. */
  write(samples: readonly Sample[]): Promise<unknown>;
  flush(): Promise<void>;
  close?(): Promise<void>;
}

/**
 * A sample refused because its key (tag, time) already holds another value or quality: the
 * first stored value is kept (the store's rule; one declaration, the store's WriteConflict).
 */
export type SampleConflict = WriteConflict;

/** What a committed write did with the samples it was given. */
export interface WriteReport {
  /** Samples new to the store. */
  readonly stored: number;
  /** Samples identical (value bit for bit, quality) to the one already stored. */
  readonly duplicates: number;
  readonly conflicts: readonly SampleConflict[];
  /**
   * refs of the duplicates, when the store names them; without it a caller can tell stored
   * from duplicate only when one of the two counts is 0.
   */
  readonly duplicateRefs?: readonly number[];
}

/** A sink whose write() resolves once the samples are committed, saying what became of them. */
export interface CommittedSampleSink extends SampleSink {
  write(samples: readonly Sample[]): Promise<WriteReport>;
}

/** A configured tag as the ingest needs it. */
export interface TagInfo {
  readonly id: number;
  readonly name: string;
  /** Unit the raw samples are stored in. */
  readonly unit: string;
}

/** Tag names (as the plant writes them) to tag ids. */
export interface TagLookup {
  get(name: string): TagInfo | undefined;
  readonly size: number;
}

export function tagLookupFrom(tags: Iterable<TagInfo>): TagLookup {
  const map = new Map<string, TagInfo>();
  for (const t of tags) map.set(t.name, t);
  return { get: (name) => map.get(name), size: map.size };
}
