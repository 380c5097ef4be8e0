/**
 * What became of each row of a sample batch. The rule for a key (tag, time) already
 * stored: the first stored value is kept. A row with the same value bit for bit and the
 * same quality is a duplicate (a re-send); any other is a conflict, refused and reported
 * so the caller can tell its user. Several rows for one key inside a batch: the first is
 * the candidate, the later ones are duplicates or conflicts of the value kept for the key
 * (the candidate's, or the stored one when the candidate itself was refused).
 */
import type { SampleRow } from './copy-binary.js';

export interface WriteConflict {
  readonly tagId: number;
  /** [ms since epoch] */
  readonly time: number;
  /** The refused value. */
  readonly value: number;
  readonly quality: number;
  /** The value kept. */
  readonly storedValue: number;
  readonly storedQuality: number;
  readonly ref?: number;
}

export interface BatchOutcome {
  /** Rows new to the database. */
  stored: number;
  duplicates: number;
  conflicts: WriteConflict[];
  /**
   * The refs of the rows counted in `duplicates` (those that carry one), in no set order. Set
   * on the staging path and for a batch's repeated keys when the batch's rows carry refs; absent
   * otherwise (then a caller can name the duplicates only when `duplicates` is 0). The fast path
   * has no duplicates and sets it only for repeats, so it costs that path nothing.
   */
  duplicateRefs?: number[];
  /** Whether the batch went straight into samples (no staging). */
  fast: boolean;
}

/** A later row of a batch whose key an earlier row (the candidate) of the same batch has. */
export interface Repeat {
  readonly row: SampleRow;
  readonly first: SampleRow;
}

/** Same value bit for bit (Object.is tells -0 from 0; values are finite, so no NaN payloads) and quality. */
export function sameSample(value: number, quality: number, keptValue: number, keptQuality: number): boolean {
  return Object.is(value, keptValue) && quality === keptQuality;
}

export function conflictOf(row: SampleRow, storedValue: number, storedQuality: number): WriteConflict {
  const c = {
    tagId: row.tagId,
    time: row.time,
    value: row.value,
    quality: row.quality,
    storedValue,
    storedQuality,
  };
  return row.ref === undefined ? c : { ...c, ref: row.ref };
}

/**
 * Sorts by (tag, time) and sets repeated keys aside (the first received stays the
 * candidate; Array.prototype.sort is stable). A batch already in order (the usual case for
 * one source) is returned as is.
 */
export function sortUnique(rows: readonly SampleRow[]): { rows: readonly SampleRow[]; repeats: Repeat[] } {
  const repeats: Repeat[] = [];
  if (isSortedUnique(rows)) return { rows, repeats };
  // Group by tag first: batches usually arrive time-major (every tag at each instant), and
  // each tag's rows are then already in time order, so no comparison sort of the batch.
  const byTag = new Map<number, SampleRow[]>();
  for (const r of rows) {
    const group = byTag.get(r.tagId);
    if (group === undefined) byTag.set(r.tagId, [r]);
    else group.push(r);
  }
  const out: SampleRow[] = [];
  for (const tag of [...byTag.keys()].sort((a, b) => a - b)) {
    const group = byTag.get(tag)!;
    let ordered = true;
    for (let i = 1; i < group.length && ordered; i++) ordered = group[i - 1]!.time <= group[i]!.time;
    if (!ordered) group.sort((a, b) => a.time - b.time);
    for (const r of group) {
      const prev = out[out.length - 1];
      if (prev === undefined || prev.tagId !== r.tagId || prev.time !== r.time) out.push(r);
      else repeats.push({ row: r, first: prev });
    }
  }
  return { rows: out, repeats };
}

export function isSortedUnique(rows: readonly SampleRow[]): boolean {
  for (let i = 1; i < rows.length; i++) {
    const a = rows[i - 1]!;
    const b = rows[i]!;
    if (a.tagId > b.tagId || (a.tagId === b.tagId && a.time >= b.time)) return false;
  }
  return true;
}

/** The index of the row of `sorted` (by tag, time, unique) with this key, by binary search; -1 if none. */
export function findRowIndex(sorted: readonly SampleRow[], tagId: number, time: number): number {
  let lo = 0;
  let hi = sorted.length - 1;
  while (lo <= hi) {
    const mid = (lo + hi) >>> 1;
    const r = sorted[mid]!;
    if (r.tagId === tagId && r.time === time) return mid;
    if (r.tagId < tagId || (r.tagId === tagId && r.time < time)) lo = mid + 1;
    else hi = mid - 1;
  }
  return -1;
}

/** Whether any row carries the caller's ref (then the outcome names its duplicates). */
export function carriesRefs(rows: readonly SampleRow[]): boolean {
  for (const r of rows) if (r.ref !== undefined) return true;
  return false;
}

/**
 * Outcomes of a batch's repeated keys, given the conflicts of its candidates (a refused
 * candidate means the stored value is the one kept).
 */
export function resolveRepeats(
  repeats: readonly Repeat[],
  candidateConflicts: readonly WriteConflict[],
): { duplicates: number; duplicateRefs: number[]; conflicts: WriteConflict[] } {
  const conflicts: WriteConflict[] = [];
  const duplicateRefs: number[] = [];
  if (repeats.length === 0) return { duplicates: 0, duplicateRefs, conflicts };
  const refused = new Map<string, WriteConflict>();
  for (const c of candidateConflicts) refused.set(`${c.tagId}:${c.time}`, c);
  let duplicates = 0;
  for (const { row, first } of repeats) {
    const stored = refused.get(`${first.tagId}:${first.time}`);
    const keptValue = stored?.storedValue ?? first.value;
    const keptQuality = stored?.storedQuality ?? first.quality;
    if (sameSample(row.value, row.quality, keptValue, keptQuality)) {
      duplicates++;
      if (row.ref !== undefined) duplicateRefs.push(row.ref);
    } else conflicts.push(conflictOf(row, keptValue, keptQuality));
  }
  return { duplicates, duplicateRefs, conflicts };
}
