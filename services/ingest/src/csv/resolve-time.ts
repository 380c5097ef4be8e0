/**
 * Time resolution of CSV cells: the file's time format found on its first timestamp, each
 * cell read in it, local wall times turned into UTC instants in the source's zone (the
 * daylight-saving gap and fold included), and the instant checked against the plausibility
 * window (time-window.ts).
 */
import { outsideTimeWindow, type TimeWindow } from '../time-window.js';
import type { CsvFormat } from './format.js';
import type { QuarantineReason } from './output.js';
import { detectTimeFormat, type FoldTracker, type ParsedTime, timeParser, ZoneResolver } from './time.js';

export { FoldTracker } from './time.js';

export type TimeResult = { ok: true; t: number } | { ok: false; code: QuarantineReason; reason: string };

function describeWall(wall: number): string {
  return new Date(wall).toISOString().slice(0, 19).replace('T', ' ');
}

export class CsvTimeReader {
  /** The time format detected for this file, once a timestamp was read. */
  format: string | undefined;
  private parser: ((text: string) => ParsedTime | undefined) | undefined;
  private readonly zone: ZoneResolver;
  private readonly latest: number;

  constructor(
    private readonly csv: CsvFormat,
    private readonly window: TimeWindow,
    private readonly now: number,
  ) {
    this.zone = new ZoneResolver(csv.timeZone);
    this.latest = now + window.aheadMs;
  }

  /** Time of a cell as a UTC instant [ms], or the quarantine code and reason explaining why not. */
  read(cell: string, fold: FoldTracker): TimeResult {
    const parsed = this.parse(cell);
    if (parsed === undefined || 'ok' in parsed) return parsed ?? this.mismatch(cell);
    const r =
      parsed.kind === 'instant' ? { ok: true as const, t: parsed.t } : this.resolve(parsed.wall, fold);
    if (r.ok && (r.t < this.window.earliestMs || r.t > this.latest)) {
      const reason = outsideTimeWindow(r.t, this.window, this.now) ?? '';
      return { ok: false, code: 'time-out-of-range', reason: `"${cell}": ${reason}` };
    }
    return r;
  }

  private parse(cell: string): ParsedTime | TimeResult | undefined {
    if (cell === '') return { ok: false, code: 'bad-time', reason: 'the timestamp is empty' };
    if (this.parser === undefined) {
      const found = detectTimeFormat(cell, this.csv.timeFormats);
      if (found === undefined) {
        const reason = `"${cell}" matches none of the formats ${this.csv.timeFormats.join(', ')}`;
        return { ok: false, code: 'bad-time', reason };
      }
      this.format = found;
      this.parser = timeParser(found);
    }
    return this.parser(cell);
  }

  private mismatch(cell: string): TimeResult {
    const reason = `"${cell}" does not match this file's time format ${this.format ?? ''}`;
    return { ok: false, code: 'bad-time', reason };
  }

  /** A wall time in the source's zone; the repeated hour by row order or quarantined (format.ambiguousTime). */
  private resolve(wall: number, fold: FoldTracker): TimeResult {
    const r = this.zone.resolve(wall);
    if (r.kind === 'unique') {
      fold.note(wall);
      return { ok: true, t: r.t };
    }
    const zone = this.csv.timeZone;
    if (r.kind === 'gap') {
      const reason = `${describeWall(wall)} does not exist in ${zone} (clocks jumped forward)`;
      return { ok: false, code: 'time-in-dst-gap', reason };
    }
    if (this.csv.ambiguousTime === 'quarantine') {
      const reason = `${describeWall(wall)} occurs twice in ${zone} (clocks went back); this source quarantines the repeated hour`;
      return { ok: false, code: 'ambiguous-time', reason };
    }
    return { ok: true, t: fold.ambiguous(wall) === 'earlier' ? r.earlier : r.later };
  }
}
