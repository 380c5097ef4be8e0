/**
 * The ingest service: every source of the plant file started, with health and metrics.
 * HTTP push is a fastify plugin the API registers (httpPushOptions gives its options).
 */
import type { Source } from '@isentrope/plant';
import type pg from 'pg';
import type { Logger } from 'pino';
import { CommittedSink, guardPool } from './forward.js';
import type { HttpPushOptions } from './http.js';
import { renderIngestMetrics, SourceMetrics, type SourceMetricsSnapshot } from './metrics.js';
import { type SourceContext, type SourceOptions, startCsvSource, startOpcuaSource } from './sources.js';
import { loadTagLookup } from './tags.js';
import type { CommittedSampleSink, TagLookup } from './types.js';

export type { CsvSourceExtras, OpcuaSourceExtras } from './sources.js';

export interface StartIngestOptions extends SourceOptions {
  /** Connection string (for tools that open their own connection; kept for the API's display). */
  readonly databaseUrl: string;
  readonly logger: Logger;
  readonly clock?: () => number;
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

/** A source with the time zone of its site (what CSV times without an offset are read in). */
interface SiteSource {
  readonly source: Source;
  readonly siteZone: string;
}

async function sourcesFromDatabase(pool: pg.Pool): Promise<SiteSource[]> {
  const r = await pool.query<{ spec: Source; time_zone: string }>(
    `SELECT s.spec, si.time_zone FROM sources s JOIN sites si ON si.id = s.site_id
     WHERE s.retired_at IS NULL ORDER BY s.id`,
  );
  return r.rows.map((row) => ({ source: row.spec, siteZone: row.time_zone }));
}

/** The plant file's sources when one is given, else the sources table (as `plant load` left it). */
async function sourcesOf(options: StartIngestOptions): Promise<SiteSource[]> {
  const { plant } = options;
  if (plant === undefined) return sourcesFromDatabase(options.pool);
  return plant.sources.map((source) => ({ source, siteZone: plant.site.timeZone }));
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
  const sources = await sourcesOf(options);
  const sink = options.sink ?? new CommittedSink(pool);
  const httpMetrics = new SourceMetrics('http', 'http', clock);
  httpMetrics.state = 'running';
  const all: SourceMetrics[] = [httpMetrics];
  const stops: (() => Promise<void>)[] = [];
  const ctx: SourceContext = { options, tags, liveTags, sink, clock, log };
  for (const { source, siteZone } of sources) {
    const started =
      source.kind === 'csv'
        ? startCsvSource(source, siteZone, ctx)
        : source.kind === 'opcua'
          ? await startOpcuaSource(source, ctx)
          : undefined;
    if (started === undefined) continue;
    all.push(started.metrics);
    stops.push(started.stop);
  }
  log.info({ sources: sources.map((s) => s.source.id) }, 'ingest started');

  const metrics = () => all.map((m) => m.snapshot());
  return {
    metrics,
    renderMetrics: () => renderIngestMetrics(metrics()),
    health: () => healthOf(metrics()),
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

/** ok: every source running; degraded: some not; down: none (HTTP push is not a source here). */
function healthOf(all: readonly SourceMetricsSnapshot[]): IngestHealth {
  const snaps = all.filter((s) => s.kind !== 'http');
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
}
