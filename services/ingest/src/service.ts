/**
 * The ingest service: every source of the plant file started, with health and metrics.
 * HTTP push is a fastify plugin the API registers (httpPushOptions gives its options).
 */
import { join } from 'node:path';
import type { PlantFile, Source } from '@isentrope/plant';
import type pg from 'pg';
import type { Logger } from 'pino';
import { DiskBuffer } from './buffer.js';
import { type CsvFormatInput, csvFormatSchema } from './csv/format.js';
import { CsvWatcher } from './csv/watch.js';
import { IngestError } from './errors.js';
import { CommittedSink, Forwarder, guardPool } from './forward.js';
import type { HttpPushOptions } from './http.js';
import { renderIngestMetrics, SourceMetrics, type SourceMetricsSnapshot } from './metrics.js';
import { type OpcuaItem, OpcuaSource, type OpcuaSourceOptions } from './opcua.js';
import { loadTagLookup } from './tags.js';
import type { CommittedSampleSink, TagLookup } from './types.js';

/** CSV options beyond the plant file's (delimiter, decimal comma, aliases, units row, formats, poll period). */
export type CsvSourceExtras = CsvFormatInput & { readonly pollMs?: number };
/** OPC UA options beyond the plant file's (publishing interval, queue, certificates, user). */
export type OpcuaSourceExtras = Partial<Omit<OpcuaSourceOptions, 'id' | 'endpoint' | 'items'>>;

export interface StartIngestOptions {
  readonly pool: pg.Pool;
  /** Connection string (for tools that open their own connection; kept for the API's display). */
  readonly databaseUrl: string;
  readonly logger: Logger;
  /** Folder for the on-disk buffers (dataDir/buffer/<source>) and the OPC UA PKI (dataDir/pki). */
  readonly dataDir: string;
  /** The plant; when absent, sources are read from the sources table. */
  readonly plant?: PlantFile;
  readonly clock?: () => number;
  readonly csv?: Readonly<Record<string, CsvSourceExtras>>;
  readonly opcua?: Readonly<Record<string, OpcuaSourceExtras>>;
  /** On-disk buffer limits per streaming source [bytes]. */
  readonly buffer?: { readonly maxBytes?: number; readonly segmentBytes?: number };
  /** Sink for streaming sources and HTTP push (default: CommittedSink on the pool). */
  readonly sink?: CommittedSampleSink;
}

export interface IngestHealth {
  /** ok: every source running; degraded: some reconnecting, buffering or failing; down: none running. */
  readonly status: 'ok' | 'degraded' | 'down';
  readonly sources: readonly {
    readonly source: string;
    readonly kind: string;
    readonly state: string;
    readonly lagSeconds: number | null;
    readonly bufferDepth: number;
    readonly lastError: string | null;
  }[];
}

export interface IngestService {
  health(): IngestHealth;
  metrics(): SourceMetricsSnapshot[];
  /** Prometheus text of metrics(). */
  renderMetrics(): string;
  /** Options for `app.register(httpPushRoutes, service.httpPushOptions(sha256(INGEST_TOKEN)))`. */
  httpPushOptions(tokenSha256: string): HttpPushOptions;
  /** Re-reads the tags table (after the plant file changed). */
  reloadTags(): Promise<void>;
  /** Stops every source; pending samples are written or left in the on-disk buffer. */
  stop(): Promise<void>;
}

async function sourcesFromDatabase(pool: pg.Pool): Promise<Source[]> {
  const r = await pool.query<{ spec: Source }>(
    'SELECT spec FROM sources WHERE retired_at IS NULL ORDER BY id',
  );
  return r.rows.map((row) => row.spec);
}

export async function startIngest(options: StartIngestOptions): Promise<IngestService> {
  const { pool, logger } = options;
  const clock = options.clock ?? Date.now;
  const log = logger.child({ module: 'ingest' });
  guardPool(pool);
  let tags: TagLookup = await loadTagLookup(pool, options.plant?.site.id);
  // Sources hold this view, so reloadTags() reaches them.
  const liveTags: TagLookup = {
    get: (name) => tags.get(name),
    get size() {
      return tags.size;
    },
  };
  const sources = options.plant?.sources ?? (await sourcesFromDatabase(pool));
  const siteZone = options.plant?.site.timeZone ?? 'UTC';
  const sink = options.sink ?? new CommittedSink(pool);
  const all: SourceMetrics[] = [];
  const stops: (() => Promise<void>)[] = [];
  const httpMetrics = new SourceMetrics('http', 'http', clock);
  httpMetrics.state = 'running';
  all.push(httpMetrics);

  for (const source of sources) {
    if (source.kind === 'csv') {
      const { pollMs, ...extras } = options.csv?.[source.id] ?? {};
      // Checked here, so a bad option stops the start instead of failing every file.
      // The plant file's format settings, then any given in code (tests, tools) on top.
      const fromPlant = Object.fromEntries(
        (['delimiter', 'decimalComma', 'aliases', 'unitsRow', 'timeFormats', 'ambiguousTime'] as const)
          .filter((key) => source[key] !== undefined)
          .map((key) => [key, source[key]]),
      );
      const format = csvFormatSchema.safeParse({
        layout: source.layout,
        timeZone: source.timeZone ?? siteZone,
        ...fromPlant,
        ...extras,
      });
      if (!format.success) {
        throw new IngestError(
          'INGEST_BAD_OPTIONS',
          `CSV source ${source.id}: ${format.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`).join('; ')}`,
          {
            source: source.id,
          },
        );
      }
      const metrics = new SourceMetrics(source.id, 'csv', clock);
      all.push(metrics);
      const watcher = new CsvWatcher({
        pool,
        source: source.id,
        tags: liveTags,
        folder: source.folder,
        pattern: source.pattern,
        format: format.data,
        metrics,
        logger: log.child({ source: source.id }),
        ...(pollMs === undefined ? {} : { pollMs }),
      });
      watcher.start();
      stops.push(() => watcher.stop());
    } else if (source.kind === 'opcua') {
      const extras = options.opcua?.[source.id] ?? {};
      const metrics = new SourceMetrics(source.id, 'opcua', clock);
      all.push(metrics);
      const items: OpcuaItem[] = [];
      for (const t of options.plant?.tags ?? []) {
        if (t.opcua === undefined || (t.opcua.endpoint !== source.endpoint && t.opcua.endpoint !== source.id))
          continue;
        const info = tags.get(t.name);
        if (info === undefined) {
          metrics.error(`tag ${t.name} is not in the database; apply the plant file first`);
          continue;
        }
        items.push({ tagId: info.id, nodeId: t.opcua.nodeId });
      }
      if (options.plant === undefined) {
        const r = await pool.query<{ id: number; opcua_node_id: string }>(
          'SELECT id, opcua_node_id FROM tags WHERE retired_at IS NULL AND opcua_node_id IS NOT NULL AND opcua_endpoint IN ($1, $2)',
          [source.endpoint, source.id],
        );
        for (const row of r.rows) items.push({ tagId: row.id, nodeId: row.opcua_node_id });
      }
      const buffer = await DiskBuffer.open({
        dir: join(options.dataDir, 'buffer', source.id),
        ...options.buffer,
      });
      const slog = log.child({ source: source.id });
      const forwarder = new Forwarder({ sink, buffer, metrics, logger: slog });
      const client = new OpcuaSource(
        {
          id: source.id,
          endpoint: source.endpoint,
          items,
          // The plant file gives the intervals in seconds.
          samplingIntervalMs: source.samplingInterval * 1000,
          publishingIntervalMs: (source.publishingInterval ?? source.samplingInterval) * 1000,
          securityMode: source.securityMode,
          ...opcuaSecurityFromPlant(source),
          pkiDir: join(options.dataDir, 'pki'),
          ...extras,
        },
        (s) => forwarder.add(s),
        metrics,
        slog,
        clock,
      );
      // Connecting retries in the background; start-up does not wait for a server.
      const started = client.start().catch((error: unknown) => {
        if (!(error instanceof IngestError && error.code === 'INGEST_STOPPED'))
          slog.error({ err: error }, 'OPC UA source failed');
      });
      stops.push(async () => {
        await client.stop();
        await started;
        await forwarder.stop();
      });
    }
  }
  log.info({ sources: sources.map((s) => s.id) }, 'ingest started');

  const metrics = () => all.map((m) => m.snapshot());
  return {
    metrics,
    renderMetrics: () => renderIngestMetrics(metrics()),
    health() {
      const snaps = metrics().filter((s) => s.kind !== 'http');
      const up = snaps.filter((s) => s.state === 'running' || s.state === 'connected').length;
      const status = up === snaps.length ? 'ok' : up === 0 ? 'down' : 'degraded';
      return {
        status,
        sources: snaps.map((s) => ({
          source: s.source,
          kind: s.kind,
          state: s.state,
          lagSeconds: s.lagSeconds,
          bufferDepth: s.bufferDepth,
          lastError: s.lastError,
        })),
      };
    },
    httpPushOptions: (tokenSha256) => ({ sink, tags: liveTags, tokenSha256, metrics: httpMetrics }),
    async reloadTags() {
      tags = await loadTagLookup(pool, options.plant?.site.id);
    },
    async stop() {
      for (const s of stops.reverse()) await s();
      log.info('ingest stopped');
    },
  };
}

/** The plant file's OPC UA security settings; a password only ever comes from the environment. */
function opcuaSecurityFromPlant(source: Extract<Source, { kind: 'opcua' }>): OpcuaSourceExtras {
  const out: {
    securityPolicy?: OpcuaSourceOptions['securityPolicy'];
    certificateFile?: string;
    privateKeyFile?: string;
    userName?: string;
    password?: string;
  } = {};
  if (source.securityPolicy !== undefined) out.securityPolicy = source.securityPolicy;
  if (source.certificateFile !== undefined) out.certificateFile = source.certificateFile;
  if (source.privateKeyFile !== undefined) out.privateKeyFile = source.privateKeyFile;
  if (source.userName !== undefined) out.userName = source.userName;
  if (source.passwordEnv !== undefined) {
    const password = process.env[source.passwordEnv];
    if (password === undefined || password === '')
      throw new IngestError(
        'INGEST_BAD_OPTIONS',
        `OPC UA source ${source.id}: environment variable ${source.passwordEnv} (named by passwordEnv) is not set`,
        { source: source.id, passwordEnv: source.passwordEnv },
      );
    out.password = password;
  }
  return out;
}
