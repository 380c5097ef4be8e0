/**
 * A CSV drop folder, polled. A file is read only once its size and modification time held
 * still over two polls (a writer still appending changes them), and never while it ends
 * in .tmp or .part (the rename convention: write "x.csv.part", then rename to "x.csv").
 * Files are taken one at a time, oldest first.
 */
import { readdir, stat } from 'node:fs/promises';
import { join } from 'node:path';
import type { Logger } from 'pino';
import { errorMessage } from '../errors.js';
import type { SourceMetrics } from '../metrics.js';
import { type IngestCsvFileOptions, ingestCsvFile } from './file.js';

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

export class CsvWatcher {
  private readonly seen = new Map<string, { size: number; mtimeMs: number }>();
  private timer: NodeJS.Timeout | undefined;
  private running: Promise<void> = Promise.resolve();
  private stopped = false;
  private readonly pattern: RegExp;

  constructor(private readonly o: CsvWatchOptions) {
    this.pattern = globToRegExp(o.pattern ?? '*.csv');
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
    const ready: { path: string; mtimeMs: number }[] = [];
    const present = new Set<string>();
    for (const name of names) {
      if (name.startsWith('.') || IN_PROGRESS.test(name) || !this.pattern.test(name)) continue;
      const path = join(this.o.folder, name);
      const st = await stat(path).catch(() => undefined);
      if (st === undefined || !st.isFile()) continue;
      present.add(path);
      const before = this.seen.get(path);
      this.seen.set(path, { size: st.size, mtimeMs: st.mtimeMs });
      if (before !== undefined && before.size === st.size && before.mtimeMs === st.mtimeMs)
        ready.push({ path, mtimeMs: st.mtimeMs });
    }
    for (const path of this.seen.keys()) if (!present.has(path)) this.seen.delete(path);
    ready.sort((a, b) => a.mtimeMs - b.mtimeMs);
    for (const { path } of ready) {
      if (this.stopped) return;
      try {
        const r = await ingestCsvFile(path, {
          ...this.o,
          onSamples: (batch) => this.o.metrics.samples(batch),
        });
        this.o.metrics.file(r.status);
        if (r.status === 'done') this.o.metrics.quarantined(r.summary.quarantined);
        this.o.metrics.state = 'running';
        this.seen.delete(path);
        this.o.logger.info({ file: path, status: r.status, fileId: r.fileId }, 'CSV file ingested');
      } catch (error) {
        // Left in place: retried at the next poll (a re-read stores nothing twice).
        this.o.metrics.state = 'error';
        this.o.metrics.error(`${path}: ${errorMessage(error)}`);
        this.o.logger.error({ err: error, file: path }, 'CSV file ingest failed; will retry');
      }
    }
  }

  async stop(): Promise<void> {
    this.stopped = true;
    if (this.timer !== undefined) clearTimeout(this.timer);
    await this.running;
    this.o.metrics.state = 'stopped';
  }
}
