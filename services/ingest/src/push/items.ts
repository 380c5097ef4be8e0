/**
 * The items of one push batch, each checked on its own: shape (zod), time within the
 * plausibility window, a configured tag. Good items become samples carrying their index as
 * ref; bad ones a rejection naming index, field and problem.
 */
import { z } from 'zod';
import { outsideTimeWindow, type TimeWindow } from '../time-window.js';
import { QUALITY, type Sample, type TagLookup } from '../types.js';
import { isStorableValue, tooLargeReason } from '../values.js';

export interface PushRejection {
  readonly index: number;
  readonly field: string;
  readonly problem: string;
}

export const pushItemSchema = z.strictObject({
  tag: z.string().min(1).max(200),
  /** ISO 8601 with an offset or Z, or epoch milliseconds. */
  time: z.union(
    [z.iso.datetime({ offset: true, precision: undefined }), z.number().int().min(0).max(8.64e15)],
    {
      error: 'expected ISO 8601 with an offset ("2026-03-01T10:00:00Z") or epoch milliseconds',
    },
  ),
  value: z
    .number({ error: 'expected a finite number' })
    .refine(isStorableValue, { error: (issue) => tooLargeReason(String(issue.input)) }),
  /** OPC DA quality code 0..255 (192 good, 64 uncertain, 0 bad); default good. */
  quality: z.number().int().min(0).max(255).optional(),
});

export interface ReadItems {
  /** Good items in the order sent, ref = index. */
  readonly samples: Sample[];
  readonly rejected: PushRejection[];
}

/** Checks every item of the batch (see the module comment). */
export function readPushItems(
  body: readonly unknown[],
  tags: TagLookup,
  window: TimeWindow,
  now: number,
): ReadItems {
  const rejected: PushRejection[] = [];
  const samples: Sample[] = [];
  body.forEach((item: unknown, index) => {
    const parsed = pushItemSchema.safeParse(item);
    if (!parsed.success) {
      for (const issue of parsed.error.issues) {
        const field = issue.path.length === 0 ? '(item)' : issue.path.join('.');
        rejected.push({ index, field, problem: issue.message });
      }
      return;
    }
    const it = parsed.data;
    const t = typeof it.time === 'number' ? it.time : Date.parse(it.time);
    const outside = outsideTimeWindow(t, window, now);
    if (outside !== undefined) {
      rejected.push({ index, field: 'time', problem: outside });
      return;
    }
    const tag = tags.get(it.tag);
    if (tag === undefined) {
      rejected.push({ index, field: 'tag', problem: `unknown tag ${JSON.stringify(it.tag)}` });
      return;
    }
    const quality = it.quality ?? QUALITY.good;
    samples.push({ tagId: tag.id, time: new Date(t), value: it.value, quality, ref: index });
  });
  return { samples, rejected };
}
