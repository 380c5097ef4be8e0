import type { SampleInput } from '@isentrope/store';
import {
  DEMO_MACHINES,
  DEMO_TAGS,
  type DemoMachineId,
  type DemoSpan,
  demoReading,
  type MachineTruth,
  machineTruth,
} from './scenario.js';

/** Stored quality of a good sample (OPC DA style, as services/ingest writes it). */
export const DEMO_GOOD_QUALITY = 192;

/** The readings of every demo tag at time t, as samples ready for the writer. */
export function demoSamplesAt(
  span: DemoSpan,
  t: number,
  tagIds: Readonly<Record<string, number>>,
  include: (tagName: string) => boolean = () => true,
): SampleInput[] {
  const truths = new Map<DemoMachineId, MachineTruth>();
  for (const machine of DEMO_MACHINES) truths.set(machine, machineTruth(span, machine, t));
  const out: SampleInput[] = [];
  DEMO_TAGS.forEach((tag, index) => {
    if (!include(tag.name)) return;
    const tagId = tagIds[tag.name];
    if (tagId === undefined) throw new Error(`demo tag ${tag.name} is not in the loaded plant`);
    const value = demoReading(
      span,
      index,
      t,
      tag.machine === undefined ? undefined : truths.get(tag.machine),
    );
    if (value !== undefined) out.push({ tagId, time: t, value, quality: DEMO_GOOD_QUALITY });
  });
  return out;
}

export interface HistoryOptions {
  readonly span: DemoSpan;
  /** First sample time [epoch ms], inclusive. */
  readonly from: number;
  /** Last sample time [epoch ms], exclusive. */
  readonly to: number;
  /** Sampling step [ms]. */
  readonly stepMs: number;
  readonly tagIds: Readonly<Record<string, number>>;
  /** Where samples go (a SampleWriter's write, or a collector in tests). */
  readonly write: (samples: readonly SampleInput[]) => Promise<void>;
  /** Called now and then with the fraction done (0..1). */
  readonly onProgress?: (done: number) => void;
}

/** Writes the demo plant's history between two instants; returns the number of samples. */
export async function writeDemoHistory(options: HistoryOptions): Promise<number> {
  const { span, from, to, stepMs, tagIds } = options;
  let batch: SampleInput[] = [];
  let written = 0;
  const steps = Math.max(1, Math.ceil((to - from) / stepMs));
  let step = 0;
  for (let t = from; t < to; t += stepMs, step++) {
    const samples = demoSamplesAt(span, t, tagIds);
    for (const s of samples) batch.push(s);
    if (batch.length >= 50_000) {
      await options.write(batch);
      written += batch.length;
      batch = [];
      options.onProgress?.(step / steps);
    }
  }
  if (batch.length > 0) {
    await options.write(batch);
    written += batch.length;
  }
  options.onProgress?.(1);
  return written;
}
