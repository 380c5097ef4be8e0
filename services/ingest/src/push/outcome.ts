/**
 * What became of each item of a push batch. The store keeps the first value stored for a key
 * (tag, time): an item repeating it exactly is a duplicate, one with another value or quality a
 * conflict (not stored; the answer gives the value kept). Items repeating a key inside the batch
 * are settled here against the first of them, which alone goes to the store.
 */
import type { CommittedSampleSink, Sample, SampleConflict, WriteReport } from '../types.js';
import type { PushRejection } from './items.js';

/**
 * 'stored-or-duplicate': the store holds the item's value for its key, stored now or before; the
 * sink counted both kinds in this batch without naming which rows were the duplicates. The
 * store's sink (CommittedSink) names them (duplicateRefs) for every item, so the push answers
 * stored or duplicate exactly; this status is left for a sink that cannot.
 */
export type PushItemStatus = 'stored' | 'duplicate' | 'stored-or-duplicate' | 'conflict' | 'rejected';

export interface PushConflict {
  readonly index: number;
  readonly value: number;
  readonly quality: number;
  readonly storedValue: number;
  readonly storedQuality: number;
}

export interface PushOutcome {
  readonly stored: number;
  readonly duplicates: number;
  readonly conflicts: PushConflict[];
  /** One status per item, in the order sent. */
  readonly items: PushItemStatus[];
}

interface Repeat {
  readonly sample: Sample;
  readonly lead: Sample;
}

/** The first sample of each key, and the later ones with the first they repeat. */
export function splitRepeats(samples: readonly Sample[]): { leads: Sample[]; repeats: Repeat[] } {
  const first = new Map<string, Sample>();
  const leads: Sample[] = [];
  const repeats: Repeat[] = [];
  for (const s of samples) {
    const key = `${s.tagId}:${s.time.getTime()}`;
    const lead = first.get(key);
    if (lead === undefined) {
      first.set(key, s);
      leads.push(s);
    } else repeats.push({ sample: s, lead });
  }
  return { leads, repeats };
}

/** Same value bit for bit (so -0 is not 0) and same quality. */
function sameReading(a: { value: number; quality: number }, b: { value: number; quality: number }): boolean {
  return Object.is(a.value, b.value) && a.quality === b.quality;
}

/**
 * Status of the leads the store was given. Conflicts come with their ref; stored and duplicate
 * are told apart by duplicateRefs, or by a count of 0 on either side.
 */
function leadStatus(report: WriteReport): (lead: Sample) => PushItemStatus {
  const conflicted = new Set(report.conflicts.map((c) => c.ref));
  const duplicated = new Set(report.duplicateRefs ?? []);
  const named = report.duplicateRefs !== undefined;
  const unnamed: PushItemStatus =
    report.duplicates === 0 ? 'stored' : report.stored === 0 ? 'duplicate' : 'stored-or-duplicate';
  return (lead) => {
    if (conflicted.has(lead.ref)) return 'conflict';
    if (!named) return unnamed;
    return lead.ref !== undefined && duplicated.has(lead.ref) ? 'duplicate' : 'stored';
  };
}

function conflictOf(s: Sample, kept: { value: number; quality: number }): PushConflict {
  return {
    index: s.ref ?? -1,
    value: s.value,
    quality: s.quality,
    storedValue: kept.value,
    storedQuality: kept.quality,
  };
}

/** Writes the batch's good samples (first of each key) and gives every item its status. */
export async function storePushItems(
  sink: CommittedSampleSink,
  itemCount: number,
  samples: readonly Sample[],
  rejected: readonly PushRejection[],
): Promise<PushOutcome> {
  const items = new Array<PushItemStatus>(itemCount).fill('rejected');
  const { leads, repeats } = splitRepeats(samples);
  const report: WriteReport =
    leads.length === 0 ? { stored: 0, duplicates: 0, conflicts: [] } : await sink.write(leads);
  const status = leadStatus(report);
  const storedConflict = new Map<number | undefined, SampleConflict>(report.conflicts.map((c) => [c.ref, c]));
  const conflicts: PushConflict[] = [];
  let duplicates = report.duplicates;
  for (const lead of leads) {
    const st = status(lead);
    items[lead.ref ?? 0] = st;
    const c = storedConflict.get(lead.ref);
    if (st === 'conflict' && c !== undefined)
      conflicts.push(conflictOf(lead, { value: c.storedValue, quality: c.storedQuality }));
  }
  for (const { sample, lead } of repeats) {
    // The value the store now holds for this key: the lead's, unless the lead was refused.
    const c = storedConflict.get(lead.ref);
    const kept = c === undefined ? lead : { value: c.storedValue, quality: c.storedQuality };
    if (sameReading(sample, kept)) {
      items[sample.ref ?? 0] = 'duplicate';
      duplicates++;
    } else {
      items[sample.ref ?? 0] = 'conflict';
      conflicts.push(conflictOf(sample, kept));
    }
  }
  for (const r of rejected) items[r.index] = 'rejected';
  conflicts.sort((a, b) => a.index - b.index);
  return { stored: report.stored, duplicates, conflicts, items };
}
