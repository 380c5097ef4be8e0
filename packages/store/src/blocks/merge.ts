/**
 * Merging late samples into a decoded block (pure). The rule for a key already stored
 * (as the hot table applies it, write-outcomes.ts): the first stored value is kept;
 * a re-sent sample with the same value bit for bit and the same quality is a duplicate, one
 * with another value or quality a conflict, and neither is stored. Several incoming rows for
 * one key: the first is the candidate, the others its duplicates or conflicts.
 */
import type { SampleRow } from '../copy-binary.js';
import type { WriteConflict } from '../write-outcomes.js';
import type { UsColumns } from './columns.js';

/** A refused sample and the one kept: the writer's WriteConflict, declared once. */
export type BlockWriteConflict = WriteConflict;

/** A sample row with the caller's optional reference (CSV line, push item index). */
export type RefRow = SampleRow & { readonly ref?: number };

export interface BlockMerge {
  readonly columns: UsColumns;
  /** Incoming rows that were new, in time order. */
  readonly stored: RefRow[];
  readonly duplicates: number;
  /** The refs of the duplicate rows that carry one. */
  readonly duplicateRefs: number[];
  readonly conflicts: BlockWriteConflict[];
}

const a64 = new Float64Array(1);
const b64 = new Float64Array(1);
const aBits = new BigUint64Array(a64.buffer);
const bBits = new BigUint64Array(b64.buffer);

/** Equal bit for bit (tells -0 from 0 and one NaN payload from another). */
export function sameBits(a: number, b: number): boolean {
  a64[0] = a;
  b64[0] = b;
  return aBits[0] === bBits[0];
}

function judge(
  r: RefRow,
  storedValue: number,
  storedQuality: number,
  conflicts: BlockWriteConflict[],
): 'duplicate' | 'conflict' {
  if (sameBits(r.value, storedValue) && r.quality === storedQuality) return 'duplicate';
  const c: BlockWriteConflict = {
    tagId: r.tagId,
    time: r.time,
    value: r.value,
    quality: r.quality,
    storedValue,
    storedQuality,
  };
  conflicts.push(r.ref === undefined ? c : { ...c, ref: r.ref });
  return 'conflict';
}

/** Merges `rows` (one tag, sorted by time) into the block's sorted columns. */
export function mergeRowsIntoColumns(block: UsColumns, rows: readonly RefRow[]): BlockMerge {
  const n = block.times.length;
  const times: number[] = [];
  const values: number[] = [];
  const qualities: number[] = [];
  const stored: RefRow[] = [];
  const conflicts: BlockWriteConflict[] = [];
  const duplicateRefs: number[] = [];
  const duplicate = (r: RefRow): void => {
    if (r.ref !== undefined) duplicateRefs.push(r.ref);
  };
  let duplicates = 0;
  let i = 0;
  for (let j = 0; j < rows.length; j++) {
    const r = rows[j]!;
    const us = r.time * 1000;
    while (i < n && (block.times[i] as number) < us) {
      times.push(block.times[i] as number);
      values.push(block.values[i] as number);
      qualities.push(block.qualities[i] as number);
      i++;
    }
    const last = times.length - 1;
    if (i < n && block.times[i] === us) {
      if (judge(r, block.values[i] as number, block.qualities[i] as number, conflicts) === 'duplicate') {
        duplicates++;
        duplicate(r);
      }
    } else if (
      last >= 0 &&
      times[last] === us &&
      stored.length > 0 &&
      stored[stored.length - 1]!.time === r.time
    ) {
      // A repeat inside the incoming rows of a key this merge just stored.
      if (judge(r, values[last]!, qualities[last]!, conflicts) === 'duplicate') {
        duplicates++;
        duplicate(r);
      }
    } else {
      times.push(us);
      values.push(r.value);
      qualities.push(r.quality);
      stored.push(r);
    }
  }
  for (; i < n; i++) {
    times.push(block.times[i] as number);
    values.push(block.values[i] as number);
    qualities.push(block.qualities[i] as number);
  }
  return {
    columns: {
      times: Float64Array.from(times),
      values: Float64Array.from(values),
      qualities: Int16Array.from(qualities),
    },
    stored,
    duplicates,
    duplicateRefs,
    conflicts,
  };
}
