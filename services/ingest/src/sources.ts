/**
 * Starting one source of the plant file: a CSV drop folder (its format checked first, so a bad
 * option stops the start instead of failing every file) or an OPC UA subscription with its
 * store-and-forward buffer. Each gives its metrics and how to stop it.
 */
import { join } from 'node:path';
import type { PlantFile, Source } from '@isentrope/plant';
import type pg from 'pg';
import type { Logger } from 'pino';
import { DiskBuffer } from './buffer.js';
import { type CsvFormat, type CsvFormatInput, csvFormatSchema } from './csv/format.js';
import { CsvWatcher } from './csv/watch.js';
import { IngestError } from './errors.js';
import { Forwarder } from './forward.js';
import { SourceMetrics } from './metrics.js';
import { type OpcuaItem, OpcuaSource, type OpcuaSourceOptions } from './opcua.js';
import type { SampleSink, TagLookup } from './types.js';

/** CSV options beyond the plant file's (delimiter, decimal comma, aliases, units row, formats, settling time, poll period). */
export type CsvSourceExtras = CsvFormatInput & { readonly pollMs?: number };
/** OPC UA options beyond the plant file's (publishing interval, queue, certificates, user). */
export type OpcuaSourceExtras = Partial<Omit<OpcuaSourceOptions, 'id' | 'endpoint' | 'items'>>;

/** The service options the sources read. */
export interface SourceOptions {
  readonly pool: pg.Pool;
  /** Folder for the on-disk buffers (dataDir/buffer/<source>) and the OPC UA PKI (dataDir/pki). */
  readonly dataDir: string;
  /** The plant; when absent, sources are read from the sources table. */
  readonly plant?: PlantFile;
  readonly csv?: Readonly<Record<string, CsvSourceExtras>>;
  readonly opcua?: Readonly<Record<string, OpcuaSourceExtras>>;
  /** On-disk buffer limits per streaming source [bytes]. */
  readonly buffer?: { readonly maxBytes?: number; readonly segmentBytes?: number };
}

export interface SourceContext {
  readonly options: SourceOptions;
  /** Tags as loaded at start (to resolve OPC UA items). */
  readonly tags: TagLookup;
  /** Tags as reloaded (what CSV files are read against). */
  readonly liveTags: TagLookup;
  readonly sink: SampleSink;
  readonly clock: () => number;
  readonly log: Logger;
}

export interface StartedSource {
  readonly metrics: SourceMetrics;
  stop(): Promise<void>;
}

type CsvSource = Extract<Source, { kind: 'csv' }>;
type OpcuaPlantSource = Extract<Source, { kind: 'opcua' }>;

/**
 * The plant file's format settings, then any given in code (tests, tools) on top, checked. Times
 * without an offset are read in the source's own zone, else its site's (from the plant file or the
 * sites table, whichever the source came from).
 */
function csvFormatFor(source: CsvSource, siteZone: string, extras: CsvFormatInput): CsvFormat {
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
  if (format.success) return format.data;
  const problems = format.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`).join('; ');
  throw new IngestError('INGEST_BAD_OPTIONS', `CSV source ${source.id}: ${problems}`, { source: source.id });
}

export function startCsvSource(source: CsvSource, siteZone: string, ctx: SourceContext): StartedSource {
  const { pollMs, ...extras } = ctx.options.csv?.[source.id] ?? {};
  const format = csvFormatFor(source, siteZone, extras);
  const metrics = new SourceMetrics(source.id, 'csv', ctx.clock);
  const watcher = new CsvWatcher({
    pool: ctx.options.pool,
    source: source.id,
    tags: ctx.liveTags,
    folder: source.folder,
    pattern: source.pattern,
    format,
    metrics,
    logger: ctx.log.child({ source: source.id }),
    ...(pollMs === undefined ? {} : { pollMs }),
  });
  watcher.start();
  return { metrics, stop: () => watcher.stop() };
}

/** The source's monitored items: from the plant file's tags, or the tags table without one. */
async function opcuaItems(
  source: OpcuaPlantSource,
  ctx: SourceContext,
  metrics: SourceMetrics,
): Promise<OpcuaItem[]> {
  const items: OpcuaItem[] = [];
  const { plant, pool } = ctx.options;
  for (const t of plant?.tags ?? []) {
    if (t.opcua === undefined || (t.opcua.endpoint !== source.endpoint && t.opcua.endpoint !== source.id))
      continue;
    const info = ctx.tags.get(t.name);
    if (info === undefined) metrics.error(`tag ${t.name} is not in the database; apply the plant file first`);
    else items.push({ tagId: info.id, nodeId: t.opcua.nodeId });
  }
  if (plant === undefined) {
    const r = await pool.query<{ id: number; opcua_node_id: string }>(
      'SELECT id, opcua_node_id FROM tags WHERE retired_at IS NULL AND opcua_node_id IS NOT NULL AND opcua_endpoint IN ($1, $2)',
      [source.endpoint, source.id],
    );
    for (const row of r.rows) items.push({ tagId: row.id, nodeId: row.opcua_node_id });
  }
  return items;
}

export async function startOpcuaSource(source: OpcuaPlantSource, ctx: SourceContext): Promise<StartedSource> {
  const { options, clock } = ctx;
  const metrics = new SourceMetrics(source.id, 'opcua', clock);
  const items = await opcuaItems(source, ctx, metrics);
  const buffer = await DiskBuffer.open({
    dir: join(options.dataDir, 'buffer', source.id),
    ...options.buffer,
  });
  const slog = ctx.log.child({ source: source.id });
  const forwarder = new Forwarder({ sink: ctx.sink, buffer, metrics, logger: slog });
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
      ...(options.opcua?.[source.id] ?? {}),
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
  const stop = async () => {
    await client.stop();
    await started;
    await forwarder.stop();
  };
  return { metrics, stop };
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
