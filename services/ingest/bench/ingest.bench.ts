/**
 * Ingest benchmark. Prints one JSON line per figure:
 * - CSV to committed rows per second (ingestCsvFile with the store's SampleWriter) for a
 *   file of INGEST_BENCH_SAMPLES samples (default 5,000,000), and `psql \copy` of the
 *   same samples into a plain table with the same primary key, in the same run;
 * - the parser alone (no database), samples per second;
 * - peak RSS (process.resourceUsage().maxRSS in a child process) while ingesting a CSV of
 *   INGEST_BENCH_RSS_MB megabytes (default 250): parser alone over the whole file, and the
 *   full path to the database for at most INGEST_BENCH_RSS_SECONDS (default 60);
 * - OPC UA: samples per second sustained with INGEST_BENCH_OPCUA_ITEMS monitored items
 *   (default 10,000) changing every second, and the delay from source time to commit (p50, p99).
 * Uses DATABASE_URL when set, else an embedded PostgreSQL in a temporary folder.
 * Data are invented (a ramp per tag).
 */
import { spawn } from 'node:child_process';
import { createReadStream, createWriteStream } from 'node:fs';
import { mkdtemp, rm, stat } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { migrate, startEmbeddedPostgres } from '@isentrope/store';
import pg from 'pg';
import { pino } from 'pino';
import { DiskBuffer } from '../src/buffer.js';
import { ingestCsvFile } from '../src/csv/file.js';
import { csvFormatSchema } from '../src/csv/format.js';
import { parseCsv } from '../src/csv/parse.js';
import { CommittedSink, Forwarder, guardPool } from '../src/forward.js';
import { SourceMetrics } from '../src/metrics.js';
import { OpcuaSource } from '../src/opcua.js';
import { loadTagLookup } from '../src/tags.js';
import { startPlantServer } from '../src/testing/opcua-plant.js';
import { seedTags } from '../src/testing/seed.js';
import type { TagLookup } from '../src/types.js';

const TAGS = 10;
const names = Array.from({ length: TAGS }, (_, i) => `B.T${String(i).padStart(2, '0')}`);
const env = (k: string, d: number) => Number(process.env[k] ?? d);

function out(bench: string, value: number, unit: string, extra: Record<string, unknown> = {}): void {
  process.stdout.write(`${JSON.stringify({ bench, value: Number(value.toPrecision(4)), unit, ...extra })}\n`);
}

/** Wide CSV, TAGS columns, one row per second from 2026-01-01; returns samples written. */
async function writeWideCsv(path: string, opts: { samples?: number; bytes?: number }): Promise<number> {
  const ws = createWriteStream(path);
  let written = 0;
  let bytes = 0;
  const t0 = Date.UTC(2026, 0, 1);
  ws.write(`time,${names.join(',')}\n`);
  let chunk = '';
  for (let row = 0; ; row++) {
    if (opts.samples !== undefined && written >= opts.samples) break;
    if (opts.bytes !== undefined && bytes >= opts.bytes) break;
    let line = new Date(t0 + row * 1000).toISOString();
    for (let i = 0; i < TAGS; i++) line += `,${(i * 10 + (row % 1000) / 10).toFixed(2)}`;
    line += '\n';
    chunk += line;
    bytes += line.length;
    written += TAGS;
    if (chunk.length > 1 << 20) {
      if (!ws.write(chunk)) await new Promise<void>((r) => ws.once('drain', () => r()));
      chunk = '';
    }
  }
  ws.write(chunk);
  await new Promise<void>((resolve, reject) => ws.end((e?: Error | null) => (e ? reject(e) : resolve())));
  return written;
}

/** The same samples as a COPY text file (tag_id, time, value, quality). */
async function writeCopyFile(path: string, samples: number, ids: number[]): Promise<void> {
  const ws = createWriteStream(path);
  const t0 = Date.UTC(2026, 0, 1);
  let chunk = '';
  for (let row = 0; row * TAGS < samples; row++) {
    const time = new Date(t0 + row * 1000).toISOString();
    for (let i = 0; i < TAGS; i++)
      chunk += `${ids[i]}\t${time}\t${(i * 10 + (row % 1000) / 10).toFixed(2)}\t192\n`;
    if (chunk.length > 1 << 20) {
      if (!ws.write(chunk)) await new Promise<void>((r) => ws.once('drain', () => r()));
      chunk = '';
    }
  }
  ws.write(chunk);
  await new Promise<void>((resolve, reject) => ws.end((e?: Error | null) => (e ? reject(e) : resolve())));
}

function runChild(args: string[], envExtra: Record<string, string> = {}): Promise<Record<string, number>> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, ['--import', 'tsx', import.meta.filename, ...args], {
      stdio: ['ignore', 'pipe', 'inherit'],
      env: { ...process.env, ...envExtra },
    });
    let text = '';
    child.stdout.on('data', (d: Buffer) => {
      text += d.toString();
    });
    child.on('error', reject);
    child.on('exit', (code) => {
      if (code !== 0) reject(new Error(`child exited ${code}`));
      else resolve(JSON.parse(text.trim().split('\n').pop() ?? '{}') as Record<string, number>);
    });
  });
}

/** Child: `--rss parse FILE` or `--rss db FILE URL SECONDS`; prints {maxRssMB, samples, seconds}. */
async function rssChild(mode: string, file: string, url?: string, seconds?: number): Promise<void> {
  const start = performance.now();
  let samples = 0;
  if (mode === 'parse') {
    const tags = { get: (n: string) => ({ id: names.indexOf(n) + 1, name: n, unit: 'bara' }), size: TAGS };
    await parseCsv(createReadStream(file, { highWaterMark: 1 << 16 }), csvFormatSchema.parse({}), tags, {
      samples: async (b) => {
        samples += b.length;
      },
      quarantine: async () => {},
    });
  } else {
    const pool = new pg.Pool({ connectionString: url, max: 4 });
    const deadline = Date.now() + (seconds ?? 60) * 1000;
    const done = ingestCsvFile(file, {
      pool,
      source: 'bench-rss',
      tags: await loadTagLookup(pool, 'bench'),
      processedDir: null,
      rejectedDir: null,
      onSamples: (b) => {
        samples += b.length;
      },
    });
    await Promise.race([done, new Promise((r) => setTimeout(r, Math.max(0, deadline - Date.now())))]);
  }
  // maxRSS is in kilobytes (Node.js docs, process.resourceUsage()).
  const maxRssMB = process.resourceUsage().maxRSS / 1024;
  process.stdout.write(
    `${JSON.stringify({ maxRssMB, samples, seconds: (performance.now() - start) / 1000 })}\n`,
  );
  process.exit(0);
}

function percentile(sorted: Float64Array, p: number): number {
  return sorted[Math.min(sorted.length - 1, Math.floor(p * sorted.length))] ?? Number.NaN;
}

/** 1. CSV -> committed rows, and psql \copy of the same samples. */
async function csvBenches(
  pool: pg.Pool,
  url: string,
  work: string,
  ids: Map<string, number>,
  tags: TagLookup,
): Promise<void> {
  const n = env('INGEST_BENCH_SAMPLES', 5_000_000);
  const csv = join(work, 'bench.csv');
  const samples = await writeWideCsv(csv, { samples: n });
  const size = (await stat(csv)).size;

  let t = performance.now();
  await parseCsv(createReadStream(csv, { highWaterMark: 1 << 16 }), csvFormatSchema.parse({}), tags, {
    samples: async () => {},
    quarantine: async () => {},
  });
  out('ingest.csv.parse_only', samples / ((performance.now() - t) / 1000), 'samples/s', { samples });

  t = performance.now();
  const r = await ingestCsvFile(csv, {
    pool,
    source: 'bench',
    tags,
    processedDir: null,
    rejectedDir: null,
  });
  const secs = (performance.now() - t) / 1000;
  if (r.status !== 'done' || r.summary.samples !== samples) throw new Error(`bench ingest: ${r.status}`);
  const stored = await pool.query<{ n: number }>('SELECT count(*)::int AS n FROM samples');
  out('ingest.csv.committed', samples / secs, 'rows/s', {
    samples,
    stored: stored.rows[0]?.n,
    fileMB: size / 1e6,
    seconds: secs,
  });

  const copyFile = join(work, 'bench.copy');
  await writeCopyFile(
    copyFile,
    samples,
    names.map((x) => ids.get(x)!),
  );
  await pool.query(
    'CREATE TABLE bench_copy (tag_id integer, time timestamptz, value double precision, quality smallint, PRIMARY KEY (tag_id, time))',
  );
  t = performance.now();
  await new Promise<void>((resolve, reject) => {
    const p = spawn(
      '/usr/lib/postgresql/15/bin/psql',
      [url!, '-q', '-c', `\\copy bench_copy FROM '${copyFile}'`],
      { stdio: 'inherit' },
    );
    p.on('error', reject);
    p.on('exit', (code) => (code === 0 ? resolve() : reject(new Error(`psql exited ${code}`))));
  });
  out('ingest.psql_copy', samples / ((performance.now() - t) / 1000), 'rows/s', {
    samples,
    table: 'plain, same primary key',
  });
  await rm(copyFile);
  await rm(csv);
  await rssBenches(url, work);
}

/** 2. Peak RSS while ingesting a large CSV. */
async function rssBenches(url: string, work: string): Promise<void> {
  const mb = env('INGEST_BENCH_RSS_MB', 250);
  const big = join(work, 'big.csv');
  const bigSamples = await writeWideCsv(big, { bytes: mb * 1e6 });
  const parseRss = await runChild(['--rss', 'parse', big]);
  out('ingest.csv.parse_max_rss', parseRss.maxRssMB ?? Number.NaN, 'MB', {
    fileMB: mb,
    samples: bigSamples,
    seconds: parseRss.seconds,
  });
  const dbRss = await runChild(['--rss', 'db', big, url, String(env('INGEST_BENCH_RSS_SECONDS', 60))]);
  out('ingest.csv.db_max_rss', dbRss.maxRssMB ?? Number.NaN, 'MB', {
    fileMB: mb,
    samplesDone: dbRss.samples,
    seconds: dbRss.seconds,
  });
  await rm(big);
}

/** 3. OPC UA with many monitored items. */
async function opcuaBench(pool: pg.Pool, work: string): Promise<void> {
  const items = env('INGEST_BENCH_OPCUA_ITEMS', 10_000);
  const seconds = env('INGEST_BENCH_OPCUA_SECONDS', 30);
  const opcNames = Array.from({ length: items }, (_, i) => `O.${i}`);
  const opcIds = await seedTags(
    pool,
    opcNames.map((name) => ({ name, unit: 'bara' })),
    'bench',
  );
  const pki = join(tmpdir(), 'isentrope-ingest-test-pki');
  const server = await startPlantServer({ names: opcNames, pkiDir: pki, record: false });
  const delays = new Float64Array(items * (seconds + 10));
  let count = 0;
  let committed = 0;
  const metrics = new SourceMetrics('bench', 'opcua');
  const logger = pino({ level: 'silent' });
  const forwarder = new Forwarder({
    sink: new CommittedSink(pool),
    buffer: await DiskBuffer.open({ dir: join(work, 'buffer') }),
    metrics,
    logger,
    onCommitted: (batch) => {
      const now = Date.now();
      committed += batch.length;
      for (const s of batch) if (count < delays.length) delays[count++] = now - s.time.getTime();
    },
  });
  const source = new OpcuaSource(
    {
      id: 'bench',
      endpoint: server.endpoint,
      items: opcNames.map((x) => ({ tagId: opcIds.get(x)!, nodeId: `ns=1;s=${x}` })),
      samplingIntervalMs: 1000,
      publishingIntervalMs: 1000,
      pkiDir: join(pki, 'client'),
      acceptUnknownCertificates: true,
    },
    (s) => forwarder.add(s),
    metrics,
    logger,
  );
  await source.start();
  server.play(1000);
  await new Promise((res) => setTimeout(res, 5000)); // warm-up
  const c0 = committed;
  count = 0;
  const t0 = performance.now();
  await new Promise((res) => setTimeout(res, seconds * 1000));
  const rate = (committed - c0) / ((performance.now() - t0) / 1000);
  server.pause();
  const sorted = delays.slice(0, count).sort();
  out('ingest.opcua.sustained', rate, 'samples/s', { items, offered: items, seconds });
  out('ingest.opcua.delay_p50', percentile(sorted, 0.5), 'ms', { items });
  out('ingest.opcua.delay_p99', percentile(sorted, 0.99), 'ms', { items });
  await source.stop();
  await forwarder.stop();
  await server.shutdown();
}

async function main(): Promise<void> {
  const work = await mkdtemp(join(tmpdir(), 'ingest-bench-'));
  let stopPg: (() => Promise<void>) | undefined;
  let url = process.env.DATABASE_URL;
  try {
    if (url === undefined || url === '') {
      // Its own temporary folder: startEmbeddedPostgres opens it to the postgres user.
      const pgDir = await mkdtemp(join(tmpdir(), 'ingest-bench-pg-'));
      const server = await startEmbeddedPostgres({ dataDir: pgDir });
      stopPg = async () => {
        await server.stop();
        await rm(pgDir, { recursive: true, force: true });
      };
      url = server.url;
    }
    await migrate(url);
    const pool = guardPool(new pg.Pool({ connectionString: url, max: 6 }));
    const ids = await seedTags(
      pool,
      names.map((name) => ({ name, unit: 'bara' })),
      'bench',
    );
    const tags = await loadTagLookup(pool, 'bench');

    const only = process.env.INGEST_BENCH_ONLY;
    if (only !== 'opcua') await csvBenches(pool, url, work, ids, tags);
    await opcuaBench(pool, work);
    await pool.end();
  } finally {
    await stopPg?.();
    await rm(work, { recursive: true, force: true });
  }
}

process.env.NODEOPCUA_LOG_LEVEL ??= '3';
const argv = process.argv.slice(2);
if (argv[0] === '--rss')
  await rssChild(argv[1]!, argv[2]!, argv[3], argv[4] === undefined ? undefined : Number(argv[4]));
else {
  await main();
  process.exit(0);
}
