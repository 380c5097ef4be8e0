/** Per-source options of a CSV drop, validated by zod; every field has a default. */
import { z } from 'zod';
import { DEFAULT_TIME_WINDOW } from '../time-window.js';
import { BUILT_IN_TIME_FORMATS } from './time.js';

function isTimeZone(zone: string): boolean {
  try {
    new Intl.DateTimeFormat('en', { timeZone: zone });
    return true;
  } catch {
    return false;
  }
}

export const csvFormatSchema = z.strictObject({
  /** wide: a time column and one column per tag; long: tag, time, value[, quality] rows. */
  layout: z.enum(['wide', 'long']).default('wide'),
  delimiter: z.string().min(1).max(4).default(','),
  /** Values written "12,5": a comma is the decimal mark and a point is refused (no thousands guessing). */
  decimalComma: z.boolean().default(false),
  /** Header text -> tag name, for files whose headers are not the configured tag names. */
  aliases: z.record(z.string(), z.string()).default({}),
  /** Wide files: the line after the header gives each column's unit. */
  unitsRow: z.boolean().default(false),
  /** IANA zone of timestamps written without an offset. */
  timeZone: z
    .string()
    .refine(isTimeZone, { error: 'unknown time zone; use an IANA name such as "Europe/Berlin"' })
    .default('UTC'),
  /** Formats tried in this order on the first timestamp of each file; the first that reads it holds for the file. */
  timeFormats: z
    .array(z.string().min(1))
    .min(1)
    .default([...BUILT_IN_TIME_FORMATS]),
  /** The repeated daylight-saving hour: resolve by row order, or quarantine its rows. */
  ambiguousTime: z.enum(['order', 'quarantine']).default('order'),
  /** Longer lines are quarantined without being held in memory [bytes]. */
  maxLineBytes: z.number().int().positive().default(1_048_576),
  /**
   * A file whose last line has no line end and that was not renamed from *.part is held back
   * until it has not changed for this long [ms]; read sooner, its last line is quarantined as
   * incomplete-line (the writer may not have finished it).
   */
  settleMs: z.number().int().min(0).default(300_000),
  /** Plausible sample times: from earliestMs [ms since epoch] to now + aheadMs [ms]; others are quarantined. */
  timeWindow: z
    .strictObject({
      earliestMs: z.number().int().default(DEFAULT_TIME_WINDOW.earliestMs),
      aheadMs: z.number().int().min(0).default(DEFAULT_TIME_WINDOW.aheadMs),
    })
    .default({ ...DEFAULT_TIME_WINDOW }),
  /** Wide files: header of the time column (default: the first column). */
  timeColumn: z.string().min(1).optional(),
  /** Long files: accepted header names (compared case-insensitively). */
  longColumns: z
    .strictObject({
      tag: z.array(z.string()).default(['tag', 'tagname', 'tag_name', 'name']),
      time: z.array(z.string()).default(['time', 'timestamp', 'datetime', 'date_time']),
      value: z.array(z.string()).default(['value', 'val']),
      quality: z.array(z.string()).default(['quality', 'q', 'status']),
    })
    .default({
      tag: ['tag', 'tagname', 'tag_name', 'name'],
      time: ['time', 'timestamp', 'datetime', 'date_time'],
      value: ['value', 'val'],
      quality: ['quality', 'q', 'status'],
    }),
});

export type CsvFormat = z.output<typeof csvFormatSchema>;
export type CsvFormatInput = z.input<typeof csvFormatSchema>;
