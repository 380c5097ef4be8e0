/**
 * A CSV drop folder, polled. A file is read only once its size and modification time held
 * still over two polls (a writer still appending changes them), and never while it ends
 * in .tmp or .part (the rename convention: write "x.csv.part", then rename to "x.csv").
 * A file whose last line has no line end, and that was not seen renamed from *.part, may
 * still be being written (a writer pausing mid-line): it is held back until it has not
 * changed for the source's settling time (format.settleMs). Files are taken one at a time,
 * oldest first.
 */
import { open, readdir, stat } from 'node:fs/promises';
import { join } from 'node:path';
import type { Logger } from 'pino';
import { errorMessage } from '../errors.js';
import type { SourceMetrics } from '../metrics.js';
import { type IngestCsvFileOptions, ingestCsvFile } from './file.js';
import { csvFormatSchema } from './format.js';

export interface CsvWatchOptions extends Omit<IngestCsvFileOptions, 'onSamples'> {
  readonly folder: string;
  /** File name glob ("*" and "?"), default "*.csv". */
  readonly pattern?: string;
  /** Poll period [ms] (default 2000). */
  readonly pollMs?: number;
  readonly metrics: SourceMetrics;
  readonly logger: Logger;
}

export function globToRegExp(glob: string): RegExp {
  const body = glob
    .replace(/[.+^${}()|[\]\\]/g, '\\$&')
    .replaceAll('*', '.*')
    .replaceAll('?', '.');
  return new RegExp(`^${body}$`, 'i');
}

const IN_PROGRESS = /\.(tmp|part)$/i;

/** True when the file's last byte ends a line (LF or CR), or the file is empty. */
async function endsWithLineEnd(path: string, size: number): Promise<boolean> {
  if (size === 0) return true;
  const handle = await open(path, 'r');
  try {
    const { buffer } = await handle.read(Buffer.alloc(1), 0, 1, size - 1);
    return buffer[0] === 0x0a || buffer[0] === 0x0d;
  } finally {
    await handle.close();
  }
}

export class CsvWatcher {
  private readonly seen = new Map<string, { size: number; mtimeMs: number }>();
  /** Paths whose *.part or *.tmp was seen at an earlier poll: renamed complete. */
  private readonly renamed = new Set<string>();
  private readonly inProgress = new Set<string>();
  private timer: NodeJS.Timeout | undefined;
  private running: Promise<void> = Promise.resolve();
  private stopped = false;
  private readonly pattern: RegExp;
  private readonly settleMs: number;

  constructor(private readonly o: CsvWatchOptions) {
    this.pattern = globToRegExp(o.pattern ?? '*.csv');
    this.settleMs = csvFormatSchema.parse(o.format ?? {}).settleMs;
  }

  start(): void {
    this.o.metrics.state = 'running';
    const tick = () => {
      if (this.stopped) return;
      this.running = this.poll().finally(() => {
        if (!this.stopped) this.timer = setTimeout(tick, this.o.pollMs ?? 2000);
      });
    };
    tick();
  }

  /** One poll: note sizes, ingest the files that held still since the last poll. */
  async poll(): Promise<void> {
    let names: string[];
    try {
      names = await readdir(this.o.folder);
    } catch (error) {
      this.o.metrics.state = 'error';
      this.o.metrics.error(`cannot read ${this.o.folder}: ${errorMessage(error)}`);
      return;
    }
    const ready = await this.stillFiles(names);
    ready.sort((a, b) => a.mtimeMs - b.mtimeMs);
    for (const file of ready) {
      if (this.stopped) return;
      const complete = this.renamed.has(file.path) || (await this.settled(file));
      if (complete !== undefined) await this.ingest(file.path, complete);
    }
  }

  /** The matching files whose size and mtime held since the last poll; notes *.part names on the way. */
  private async stillFiles(
    names: readonly string[],
  ): Promise<{ path: string; size: number; mtimeMs: number }[]> {
    const ready: { path: string; size: number; mtimeMs: number }[] = [];
    const present = new Set<string>();
    const parts = new Set<string>();
    for (const name of names) {
      if (name.startsWith('.')) continue;
      const path = join(this.o.folder, name);
      if (IN_PROGRESS.test(name)) {
        parts.add(path.replace(IN_PROGRESS, ''));
        continue;
      }
      if (!this.pattern.test(name)) continue;
      const st = await stat(path).catch(() => undefined);
      if (st === undefined || !st.isFile()) continue;
      present.add(path);
      if (this.inProgress.has(path)) this.renamed.add(path);
      const before = this.seen.get(path);
      this.seen.set(path, { size: st.size, mtimeMs: st.mtimeMs });
      if (before !== undefined && before.size === st.size && before.mtimeMs === st.mtimeMs)
        ready.push({ path, size: st.size, mtimeMs: st.mtimeMs });
    }
    for (const path of this.seen.keys()) if (!present.has(path)) this.seen.delete(path);
    for (const path of this.renamed) if (!present.has(path)) this.renamed.delete(path);
    this.inProgress.clear();
    for (const p of parts) this.inProgress.add(p);
    return ready;
  }

  /**
   * Whether a still file can be read as complete: true when its last line is ended or it has
   * settled; undefined (held back) while a last line without a line end may still grow.
   */
  private async settled(file: { path: string; size: number; mtimeMs: number }): Promise<boolean | undefined> {
    if (await endsWithLineEnd(file.path, file.size).catch(() => true)) return false;
    return (this.o.now ?? Date.now)() - file.mtimeMs >= this.settleMs ? true : undefined;
  }

  private async ingest(path: string, complete: boolean): Promise<void> {
    try {
      const r = await ingestCsvFile(path, {
        ...this.o,
        complete,
        onSamples: (batch) => this.o.metrics.samples(batch),
      });
      this.o.metrics.file(r.status);
      if (r.status === 'done') this.o.metrics.quarantined(r.summary.quarantined + r.written.conflicts);
      this.o.metrics.state = 'running';
      this.seen.delete(path);
      this.renamed.delete(path);
      const counts = r.status === 'done' ? { ...r.written, quarantined: r.summary.quarantined } : {};
      this.o.logger.info({ file: path, status: r.status, fileId: r.fileId, ...counts }, 'CSV file ingested');
    } catch (error) {
      // Left in place: retried at the next poll (a re-read stores nothing twice).
      this.o.metrics.state = 'error';
      this.o.metrics.error(`${path}: ${errorMessage(error)}`);
      this.o.logger.error({ err: error, file: path }, 'CSV file ingest failed; will retry');
    }
  }

  async stop(): Promise<void> {
    this.stopped = true;
    if (this.timer !== undefined) clearTimeout(this.timer);
    await this.running;
    this.o.metrics.state = 'stopped';
  }
}
