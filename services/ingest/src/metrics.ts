/** Per-source counters and health, as plain objects, and their Prometheus text form. */
import type { Sample } from './types.js';

export type SourceKind = 'csv' | 'opcua' | 'http';
export type SourceState =
  | 'starting'
  | 'running'
  | 'connected'
  | 'reconnecting'
  | 'buffering'
  | 'error'
  | 'stopped';

export interface SourceMetricsSnapshot {
  readonly source: string;
  readonly kind: SourceKind;
  readonly state: SourceState;
  readonly samplesTotal: number;
  /** Samples handed to the store per second, over the last RATE_WINDOW_S seconds. */
  readonly samplesPerSecond: number;
  /** Time of the newest sample seen [ms since epoch], or null. */
  readonly newestSampleTime: number | null;
  /** now - newest sample time [s], or null before the first sample. */
  readonly lagSeconds: number | null;
  /** Samples waiting in the on-disk buffer. */
  readonly bufferDepth: number;
  /** Bytes held by the on-disk buffer. */
  readonly bufferBytes: number;
  /** Samples refused because the buffer was full. */
  readonly bufferRefused: number;
  readonly quarantinedTotal: number;
  readonly filesProcessed: number;
  readonly filesRejected: number;
  readonly filesDuplicate: number;
  readonly errorsTotal: number;
  readonly lastError: string | null;
  readonly lastErrorTime: number | null;
}

const RATE_WINDOW_S = 10;

export class SourceMetrics {
  state: SourceState = 'starting';
  private samplesTotal = 0;
  private newest: number | null = null;
  private readonly buckets = new Map<number, number>();
  bufferDepth = 0;
  bufferBytes = 0;
  private bufferRefused = 0;
  private quarantinedTotal = 0;
  private filesProcessed = 0;
  private filesRejected = 0;
  private filesDuplicate = 0;
  private errorsTotal = 0;
  private lastError: string | null = null;
  private lastErrorTime: number | null = null;

  constructor(
    readonly source: string,
    readonly kind: SourceKind,
    private readonly clock: () => number = Date.now,
  ) {}

  samples(batch: readonly Sample[]): void {
    this.samplesTotal += batch.length;
    const second = Math.floor(this.clock() / 1000);
    this.buckets.set(second, (this.buckets.get(second) ?? 0) + batch.length);
    for (const k of this.buckets.keys()) if (k <= second - RATE_WINDOW_S) this.buckets.delete(k);
    for (const s of batch) {
      const t = s.time.getTime();
      if (this.newest === null || t > this.newest) this.newest = t;
    }
  }

  quarantined(n: number): void {
    this.quarantinedTotal += n;
  }

  refused(n: number): void {
    this.bufferRefused += n;
  }

  file(outcome: 'done' | 'duplicate' | 'rejected'): void {
    if (outcome === 'done') this.filesProcessed++;
    else if (outcome === 'duplicate') this.filesDuplicate++;
    else this.filesRejected++;
  }

  error(message: string): void {
    this.errorsTotal++;
    this.lastError = message;
    this.lastErrorTime = this.clock();
  }

  snapshot(): SourceMetricsSnapshot {
    const now = this.clock();
    const second = Math.floor(now / 1000);
    let recent = 0;
    for (const [k, n] of this.buckets) if (k > second - RATE_WINDOW_S) recent += n;
    return {
      source: this.source,
      kind: this.kind,
      state: this.state,
      samplesTotal: this.samplesTotal,
      samplesPerSecond: recent / RATE_WINDOW_S,
      newestSampleTime: this.newest,
      lagSeconds: this.newest === null ? null : (now - this.newest) / 1000,
      bufferDepth: this.bufferDepth,
      bufferBytes: this.bufferBytes,
      bufferRefused: this.bufferRefused,
      quarantinedTotal: this.quarantinedTotal,
      filesProcessed: this.filesProcessed,
      filesRejected: this.filesRejected,
      filesDuplicate: this.filesDuplicate,
      errorsTotal: this.errorsTotal,
      lastError: this.lastError,
      lastErrorTime: this.lastErrorTime,
    };
  }
}

function label(value: string): string {
  return value.replaceAll('\\', '\\\\').replaceAll('"', '\\"').replaceAll('\n', '\\n');
}

const FAMILIES: readonly [keyof SourceMetricsSnapshot, string, 'counter' | 'gauge', string][] = [
  ['samplesTotal', 'isentrope_ingest_samples_total', 'counter', 'Samples handed to the store.'],
  [
    'samplesPerSecond',
    'isentrope_ingest_samples_per_second',
    'gauge',
    'Samples per second over the last 10 s.',
  ],
  ['lagSeconds', 'isentrope_ingest_lag_seconds', 'gauge', 'Now minus the newest sample time.'],
  ['bufferDepth', 'isentrope_ingest_buffer_samples', 'gauge', 'Samples waiting in the on-disk buffer.'],
  ['bufferBytes', 'isentrope_ingest_buffer_bytes', 'gauge', 'Bytes held by the on-disk buffer.'],
  [
    'bufferRefused',
    'isentrope_ingest_buffer_refused_total',
    'counter',
    'Samples refused because the buffer was full.',
  ],
  [
    'quarantinedTotal',
    'isentrope_ingest_quarantined_total',
    'counter',
    'Rows, cells or items quarantined or rejected.',
  ],
  ['filesProcessed', 'isentrope_ingest_files_processed_total', 'counter', 'CSV files ingested.'],
  ['filesRejected', 'isentrope_ingest_files_rejected_total', 'counter', 'CSV files moved to rejected.'],
  [
    'filesDuplicate',
    'isentrope_ingest_files_duplicate_total',
    'counter',
    'CSV files already ingested (same SHA-256).',
  ],
  ['errorsTotal', 'isentrope_ingest_errors_total', 'counter', 'Errors (connection, database, file system).'],
];

/** Prometheus text exposition format (version 0.0.4) of the sources' metrics. */
export function renderIngestMetrics(snapshots: readonly SourceMetricsSnapshot[]): string {
  const lines: string[] = [];
  for (const [key, name, type, help] of FAMILIES) {
    lines.push(`# HELP ${name} ${help}`, `# TYPE ${name} ${type}`);
    for (const s of snapshots) {
      const v = s[key];
      if (typeof v !== 'number') continue;
      lines.push(`${name}{source="${label(s.source)}",kind="${s.kind}"} ${v}`);
    }
  }
  lines.push(
    '# HELP isentrope_ingest_up 1 when the source is running or connected.',
    '# TYPE isentrope_ingest_up gauge',
  );
  for (const s of snapshots) {
    const up = s.state === 'running' || s.state === 'connected' ? 1 : 0;
    lines.push(`isentrope_ingest_up{source="${label(s.source)}",kind="${s.kind}"} ${up}`);
  }
  return `${lines.join('\n')}\n`;
}
