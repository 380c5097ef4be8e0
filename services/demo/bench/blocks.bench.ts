/**
 * Compressed sample blocks (issue 16): bytes on disk per sample (table + TOAST + index over
 * samples packed, pg_total_relation_size) on (a) the invented demo plant's year of history and
 * (b) a 1 s series with transmitter-like noise at 4-decimal resolution; the pack rate (rows
 * read, encoded, blocks written, rows removed); the decode rate through readSeries; the raw
 * trend of one day of 1 s data at 1,000 buckets before and after packing, with the SQL
 * aggregation it replaced beside it, interleaved; the one-year trend (hourly rollup) before and
 * after. Creates and drops its own database on TEST_DATABASE_URL's server (or the local one).
 * One JSON line per figure. Data are invented (DEMO DATA - INVENTED for the demo plant).
 */

import { randomBytes } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { mkdtemp, rm } from 'node:fs/promises';
import { loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { decodeBlock } from '@isentrope/codec';
import {
  ensurePartitions,
  migrate,
  type PackReport,
  packSamples,
  QUALITY_GOOD,
  readSeries,
  readTrend,
  type SampleInput,
  SampleWriter,
} from '@isentrope/store';
import pg from 'pg';
import { prepareDemo } from '../src/demo.js';

const server = process.env.TEST_DATABASE_URL ?? 'postgres://postgres@127.0.0.1:5432/postgres';
const name = `isentrope_bench_${randomBytes(4).toString('hex')}`;
const admin = new URL(server);
const url = new URL(server);
url.pathname = `/${name}`;
const DAY = 86_400_000;

function emit(bench: string, value: number, unit: string): void {
  console.log(JSON.stringify({ bench, value: Number(value.toPrecision(4)), unit }));
}

/** Standard normal deviates (Box-Muller, common practice) from a seeded LCG. */
function gauss(seed: number): () => number {
  let s = seed >>> 0;
  const u = (): number => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return (s + 1) / 2 ** 32;
  };
  return () => Math.sqrt(-2 * Math.log(u())) * Math.cos(2 * Math.PI * u());
}

/**
 * A 1 s transmitter series: a slow process swing plus white noise of 0.05 % of a 0-100 span
 * (a typical smart transmitter's accuracy class, common practice, no source), written at
 * 4-decimal resolution as a historian's interface would deliver it.
 */
function transmitter(tagId: number, start: number, n: number): SampleInput[] {
  const g = gauss(tagId);
  const out: SampleInput[] = new Array(n);
  for (let i = 0; i < n; i++) {
    const v = 60 + 5 * Math.sin((2 * Math.PI * i) / 86_400) + 0.5 * Math.sin(i / 600 + tagId) + 0.05 * g();
    out[i] = { tagId, time: start + i * 1000, value: Math.round(v * 1e4) / 1e4, quality: QUALITY_GOOD };
  }
  return out;
}

async function bytesOf(pool: pg.Pool, relation: string): Promise<number> {
  const r = await pool.query<{ b: string }>(`SELECT pg_total_relation_size('${relation}')::text AS b`);
  return Number(r.rows[0]!.b);
}

/** CPU seconds (user + system) of a process from /proc (Linux proc(5): fields 14 and 15, clock ticks of 1/100 s). */
function procCpuSeconds(pid: number): number {
  const stat = readFileSync(`/proc/${pid}/stat`, 'utf8');
  const fields = stat.slice(stat.lastIndexOf(')') + 2).split(' ');
  return (Number(fields[11]) + Number(fields[12])) / 100;
}

/**
 * Runs `work` on a one-connection pool and returns the CPU seconds it took in this process and
 * in that connection's server backend (local server only): a rate per CPU second does not
 * depend on how many other processes share the host, as wall time does.
 */
async function cpuOf<T>(work: (pool: pg.Pool) => Promise<T>): Promise<{ out: T; cpu: number }> {
  const one = new pg.Pool({ connectionString: url.toString(), max: 1 });
  try {
    const pid = (await one.query<{ p: number }>('SELECT pg_backend_pid() AS p')).rows[0]!.p;
    const server0 = procCpuSeconds(pid);
    const client0 = process.cpuUsage();
    const out = await work(one);
    const c = process.cpuUsage(client0);
    return { out, cpu: procCpuSeconds(pid) - server0 + (c.user + c.system) / 1e6 };
  } finally {
    await one.end();
  }
}

function emitPack(label: string, r: PackReport, cpu: number): void {
  emit(`store.blocks.${label}.pack.rate`, r.rowsRead / (r.ms / 1000), 'samples/s');
  emit(`store.blocks.${label}.pack.rate_per_cpu_second`, r.rowsRead / cpu, 'samples/cpu-s');
  emit(`store.blocks.${label}.pack.samples`, r.rowsRead, 'samples');
  emit(`store.blocks.${label}.pack.blocks_written`, r.blocksWritten, 'blocks');
  emit(`store.blocks.${label}.pack.rows_removed`, r.rowsRemoved, 'rows');
  for (const [phase, ms] of Object.entries(r.phases))
    emit(`store.blocks.${label}.pack.phase.${phase}`, ms / 1000, 's');
}

async function median(n: number, run: () => Promise<unknown>): Promise<number> {
  const times: number[] = [];
  for (let i = 0; i < n; i++) {
    const t = performance.now();
    await run();
    times.push(performance.now() - t);
  }
  times.sort((a, b) => a - b);
  return times[Math.floor(n / 2)]!;
}

/** The raw-trend SQL readTrend ran before readSeries (aggregation in the server), for comparison. */
const OLD_RAW_TREND = `WITH g AS (
    SELECT floor((date_part('epoch', time) - $5::float8) / $4::float8)::int AS b, min(value) AS min, max(value) AS max,
           avg(value) AS mean, count(*)::int AS count, max(time) AS latest
      FROM samples WHERE tag_id = $1 AND time >= $2 AND time < $3 GROUP BY 1)
  SELECT g.b, g.min, g.max, g.mean, g.count, r.last, r.last_time FROM g CROSS JOIN LATERAL (
    SELECT value AS last, time AS last_time FROM samples WHERE tag_id = $1 AND time = g.latest LIMIT 1) r ORDER BY g.b`;

async function trends(pool: pg.Pool, label: string, y0: number, y1: number): Promise<void> {
  const day = { from: new Date(y1 - DAY), to: new Date(y1) };
  const raw = () => readTrend(pool, { series: { kind: 'tag', tagId: 999 }, ...day, buckets: 1000 });
  const sql = () =>
    pool.query(OLD_RAW_TREND, [
      999,
      day.from.toISOString(),
      day.to.toISOString(),
      86.4,
      day.from.getTime() / 1000,
    ]);
  // Interleaved A/B rounds: the host is shared.
  const a: number[] = [];
  const b: number[] = [];
  for (let round = 0; round < 3; round++) {
    a.push(await median(7, raw));
    if (label === 'hot') b.push(await median(7, sql));
  }
  emit(`store.blocks.trend.day_1s_raw_1000_buckets.${label}.median`, Math.min(...a), 'ms');
  if (b.length > 0) emit('store.blocks.trend.day_1s_raw_1000_buckets.old_sql.median', Math.min(...b), 'ms');
  const year = () =>
    readTrend(pool, {
      series: { kind: 'tag', tagId: 999 },
      from: new Date(y0),
      to: new Date(y1),
      buckets: 1000,
    });
  emit(`store.blocks.trend.year_1000_buckets.${label}.median`, await median(11, year), 'ms');
}

async function main(): Promise<void> {
  const a = new pg.Client({ connectionString: admin.toString() });
  await a.connect();
  await a.query(`CREATE DATABASE ${name}`);
  await a.end();
  const pool = new pg.Pool({ connectionString: url.toString(), max: 4 });
  const dataDir = await mkdtemp(join(tmpdir(), 'isentrope-blocks-bench-'));
  try {
    await migrate(url.toString());
    emit('store.host.loadavg_1min_at_start', loadavg()[0] ?? 0, 'load');

    // (b) 1 s transmitter series: 4 tags x 7 days, packed; then readSeries over them.
    const b0 = Date.UTC(2024, 2, 1);
    await ensurePartitions(pool, 'samples', b0, b0 + 8 * DAY);
    const w = new SampleWriter(pool, { batchSize: 50_000, flushIntervalMs: 0, rollups: false });
    for (let tag = 1; tag <= 4; tag++) {
      const s = transmitter(tag, b0, 7 * 86_400);
      for (let i = 0; i < s.length; i += 50_000) await w.write(s.slice(i, i + 50_000));
    }
    await w.close();
    await pool.query('VACUUM ANALYZE samples');
    const hotBytes = await bytesOf(pool, 'samples_p2024_03');
    const n1s = 4 * 7 * 86_400;
    emit('store.blocks.noise_1s.hot.bytes_per_sample', hotBytes / n1s, 'bytes/sample');
    const { out: p1, cpu: c1 } = await cpuOf((one) => packSamples(one, { nowMs: b0 + 40 * DAY }));
    emitPack('noise_1s', p1, c1);
    await pool.query('VACUUM ANALYZE sample_blocks');
    emit(
      'store.blocks.noise_1s.bytes_per_sample',
      (await bytesOf(pool, 'sample_blocks')) / n1s,
      'bytes/sample',
    );
    const payloads = await pool.query<{ p: Buffer }>('SELECT payload AS p FROM sample_blocks');
    const t = performance.now();
    const cpu0 = process.cpuUsage();
    let decoded = 0;
    for (let round = 0; round < 5; round++)
      for (const r of payloads.rows) decoded += decodeBlock(r.p).times.length;
    const cpu = process.cpuUsage(cpu0);
    emit('store.blocks.noise_1s.decode_block.rate', decoded / ((performance.now() - t) / 1000), 'samples/s');
    emit(
      'store.blocks.noise_1s.decode_block.rate_per_cpu_second',
      decoded / ((cpu.user + cpu.system) / 1e6),
      'samples/cpu-s',
    );
    const rs = await median(5, () => readSeries(pool, [1, 2, 3, 4], b0, b0 + 7 * DAY));
    emit('store.blocks.noise_1s.read_series.rate', n1s / (rs / 1000), 'samples/s');
    const rc = await cpuOf((one) => readSeries(one, [1, 2, 3, 4], b0, b0 + 7 * DAY));
    emit('store.blocks.noise_1s.read_series.rate_per_cpu_second', n1s / rc.cpu, 'samples/cpu-s');
    await pool.query('TRUNCATE sample_blocks, samples, samples_1m, samples_1h, tag_last');

    // (a) The demo plant's year of history as its first start writes it (pack off), then packed.
    const demo = await prepareDemo({
      pool,
      dataDir,
      days: 365,
      pack: false,
      now: () => Date.UTC(2025, 11, 31, 12),
    });
    await pool.query('VACUUM ANALYZE samples');
    const parts = await pool.query<{ b: string }>(
      `SELECT sum(pg_total_relation_size(c.oid))::text AS b FROM pg_inherits i JOIN pg_class c ON c.oid = i.inhrelid
        WHERE i.inhparent = 'samples'::regclass`,
    );
    emit('store.blocks.demo_year.samples', demo.samplesWritten, 'samples');
    emit(
      'store.blocks.demo_year.hot.bytes_per_sample',
      Number(parts.rows[0]!.b) / demo.samplesWritten,
      'bytes/sample',
    );
    const { out: p2, cpu: c2 } = await cpuOf((one) =>
      packSamples(one, { nowMs: Date.UTC(2025, 11, 31, 12) }),
    );
    emitPack('demo_year', p2, c2);
    await pool.query('VACUUM ANALYZE sample_blocks');
    emit(
      'store.blocks.demo_year.bytes_per_sample',
      (await bytesOf(pool, 'sample_blocks')) / p2.rowsRead,
      'bytes/sample',
    );
    await pool.query('TRUNCATE sample_blocks, samples, samples_1m, samples_1h, tag_last');

    // One tag: a year of hourly rollups and its last day of raw 1 s samples, as store.bench.ts.
    const y0 = Date.UTC(2025, 0, 1);
    const y1 = Date.UTC(2026, 0, 1);
    for (const table of ['samples', 'samples_1m', 'samples_1h'] as const)
      await ensurePartitions(pool, table, y0, y1);
    await pool.query(
      `INSERT INTO samples_1h SELECT 999, b, 49, 51, 3600 * 50, 3600, 50, b + interval '3599 s'
         FROM generate_series($1::timestamptz, $2::timestamptz - interval '1 hour', interval '1 hour') AS b`,
      [new Date(y0).toISOString(), new Date(y1).toISOString()],
    );
    await pool.query(
      `INSERT INTO samples SELECT 999, t, round((50 + sin(extract(epoch FROM t) / 86400.0))::numeric, 4)::float8, 192
         FROM generate_series($1::timestamptz, $2::timestamptz - interval '1 s', interval '1 s') AS t`,
      [new Date(y1 - DAY).toISOString(), new Date(y1).toISOString()],
    );
    await pool.query('VACUUM ANALYZE samples, samples_1h');
    await trends(pool, 'hot', y0, y1);
    await packSamples(pool, { nowMs: y1 + 3 * DAY });
    await trends(pool, 'packed', y0, y1);
    emit('store.host.loadavg_1min_at_end', loadavg()[0] ?? 0, 'load');
  } finally {
    await rm(dataDir, { recursive: true, force: true });
    await pool.end();
    const d = new pg.Client({ connectionString: admin.toString() });
    await d.connect();
    await d.query(`DROP DATABASE IF EXISTS ${name} WITH (FORCE)`);
    await d.end();
  }
}

await main();
