/**
 * Store benchmarks: batch writer vs psql \copy, a one-year trend query, bytes per sample.
 * Creates and drops its own database on TEST_DATABASE_URL's server (or the local one).
 * Prints one JSON line per figure. Data are invented (smooth signals plus noise).
 */
import { execFileSync } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import pg from 'pg';
import { migrate } from '../src/migrate.js';
import { ensurePartitions } from '../src/partitions.js';
import { type SampleInput, SampleWriter } from '../src/samples-writer.js';
import { readTrend } from '../src/trends.js';

const server = process.env.TEST_DATABASE_URL ?? 'postgres://postgres@127.0.0.1:5432/postgres';
const name = `isentrope_bench_${randomBytes(4).toString('hex')}`;
const admin = new URL(server);
const url = new URL(server);
url.pathname = `/${name}`;

function emit(bench: string, value: number, unit: string): void {
  console.log(JSON.stringify({ bench, value: Number(value.toPrecision(4)), unit }));
}

function rows(tags: number, seconds: number, start: number, tagBase = 1): SampleInput[] {
  const out: SampleInput[] = [];
  for (let tag = tagBase; tag < tagBase + tags; tag++) {
    let v = 50 + tag;
    for (let i = 0; i < seconds; i++) {
      v += Math.sin(i * 0.001 + tag) * 0.02 + (((i * 2654435761 + tag) >>> 0) / 2 ** 32 - 0.5) * 0.01;
      out.push({ tagId: tag, time: start + i * 1000, value: v, quality: 0 });
    }
  }
  return out;
}

async function main(): Promise<void> {
  const a = new pg.Client({ connectionString: admin.toString() });
  await a.connect();
  await a.query(`CREATE DATABASE ${name}`);
  await a.end();
  const pool = new pg.Pool({ connectionString: url.toString(), max: 4 });
  const csv = join(tmpdir(), `${name}.copy`);
  try {
    await migrate(url.toString());
    const start = Date.UTC(2026, 0, 1);
    const data = rows(100, 10_000, start); // 1,000,000 rows
    await ensurePartitions(pool, 'samples', start, start + 86_400_000);
    await ensurePartitions(pool, 'samples_1m', start, start + 86_400_000);
    await ensurePartitions(pool, 'samples_1h', start, start + 86_400_000);

    // psql \copy of the same rows, same table, text format like the writer's.
    writeFileSync(
      csv,
      data
        .map((r) => `${r.tagId}\t${new Date(r.time as number).toISOString()}\t${r.value}\t${r.quality}\n`)
        .join(''),
    );
    let t = performance.now();
    execFileSync('psql', [
      '-q',
      '-v',
      'ON_ERROR_STOP=1',
      url.toString(),
      '-c',
      `\\copy samples (tag_id, time, value, quality) FROM '${csv}'`,
    ]);
    const psqlRate = data.length / ((performance.now() - t) / 1000);
    emit('store.copy.psql', psqlRate, 'rows/s');
    await pool.query('TRUNCATE samples, tag_last, samples_1m, samples_1h');

    for (const rollups of [false, true]) {
      const w = new SampleWriter(pool, { batchSize: 50_000, flushIntervalMs: 0, rollups });
      t = performance.now();
      for (let i = 0; i < data.length; i += 50_000) await w.write(data.slice(i, i + 50_000));
      await w.close();
      const rate = data.length / ((performance.now() - t) / 1000);
      emit(rollups ? 'store.writer.with_rollups' : 'store.writer.no_rollups', rate, 'rows/s');
      if (!rollups) emit('store.writer.ratio_to_psql', rate / psqlRate, 'ratio');
      await pool.query('TRUNCATE samples, tag_last, samples_1m, samples_1h');
    }

    // Re-sent batch cost (staging path, nothing new).
    const resend = data.slice(0, 200_000);
    const w = new SampleWriter(pool, { batchSize: 50_000, flushIntervalMs: 0 });
    await w.write(resend);
    await w.flush();
    t = performance.now();
    await w.write(resend);
    await w.close();
    emit('store.writer.resend_dedupe', resend.length / ((performance.now() - t) / 1000), 'rows/s');
    await pool.query('TRUNCATE samples, tag_last, samples_1m, samples_1h');

    // One tag, one year of 1 s data, 1000 buckets. The trend reads samples_1h at this
    // width, so the rollups of the year are generated in SQL (31.5 M raw rows would not
    // fit the time budget); the last day also gets its raw 1 s samples for a raw query.
    const y0 = Date.UTC(2025, 0, 1);
    const y1 = Date.UTC(2026, 0, 1);
    for (const table of ['samples', 'samples_1m', 'samples_1h'] as const)
      await ensurePartitions(pool, table, y0, y1);
    await pool.query(
      `INSERT INTO samples_1m SELECT 999, b, 50 + sin(e) - 0.1, 50 + sin(e) + 0.1, 60 * (50 + sin(e)), 60, 50 + sin(e), b + interval '59 s'
         FROM generate_series($1::timestamptz, $2::timestamptz - interval '1 minute', interval '1 minute') AS b,
              LATERAL (SELECT extract(epoch FROM b) / 86400.0 AS e) x`,
      [new Date(y0).toISOString(), new Date(y1).toISOString()],
    );
    await pool.query(
      `INSERT INTO samples_1h SELECT tag_id, date_trunc('hour', bucket), min(min), max(max), sum(sum), sum(count)::int,
              (array_agg(last_value ORDER BY last_time DESC))[1], max(last_time) FROM samples_1m WHERE tag_id = 999 GROUP BY 1, 2`,
    );
    await pool.query(
      `INSERT INTO samples SELECT 999, t, 50 + sin(extract(epoch FROM t) / 86400.0), 0
         FROM generate_series($1::timestamptz, $2::timestamptz - interval '1 s', interval '1 s') AS t`,
      [new Date(y1 - 86_400_000).toISOString(), new Date(y1).toISOString()],
    );
    await pool.query('VACUUM ANALYZE samples, samples_1m, samples_1h');
    for (const [label, from, to] of [
      ['year_1000_buckets', y0, y1],
      ['day_1000_buckets_raw', y1 - 86_400_000, y1],
    ] as const) {
      const times: number[] = [];
      for (let i = 0; i < 21; i++) {
        t = performance.now();
        await readTrend(pool, {
          series: { kind: 'tag', tagId: 999 },
          from: new Date(from),
          to: new Date(to),
          buckets: 1000,
        });
        times.push(performance.now() - t);
      }
      times.sort((x, y) => x - y);
      emit(`store.trend.${label}.median`, times[10]!, 'ms');
    }

    // Bytes on disk per sample: 20 tags x 1 day, raw in one month, swinging-door in another.
    const raw = rows(20, 86_400, Date.UTC(2024, 0, 1), 100);
    const comp = rows(20, 86_400, Date.UTC(2024, 1, 1), 200);
    const wr = new SampleWriter(pool, { batchSize: 50_000, flushIntervalMs: 0, rollups: false });
    for (let i = 0; i < raw.length; i += 50_000) await wr.write(raw.slice(i, i + 50_000));
    await wr.close();
    const compression = new Map(
      Array.from({ length: 20 }, (_, k) => [200 + k, { method: 'swinging-door' as const, deviation: 0.05 }]),
    );
    const wc = new SampleWriter(pool, { batchSize: 50_000, flushIntervalMs: 0, rollups: false, compression });
    for (let i = 0; i < comp.length; i += 50_000) await wc.write(comp.slice(i, i + 50_000));
    await wc.close();
    await pool.query('VACUUM ANALYZE samples');
    const size = async (part: string): Promise<{ bytes: number; n: number }> => {
      const r = await pool.query<{ bytes: string; n: string }>(
        `SELECT pg_total_relation_size('${part}')::text AS bytes, (SELECT count(*) FROM ${part})::text AS n`,
      );
      return { bytes: Number(r.rows[0]!.bytes), n: Number(r.rows[0]!.n) };
    };
    const s1 = await size('samples_p2024_01');
    const s2 = await size('samples_p2024_02');
    emit('store.disk.bytes_per_sample.uncompressed', s1.bytes / raw.length, 'bytes/sample');
    emit('store.disk.bytes_per_input_sample.swinging_door_0.05', s2.bytes / comp.length, 'bytes/sample');
    emit('store.disk.compression_kept_fraction', s2.n / comp.length, 'fraction');
  } finally {
    rmSync(csv, { force: true });
    await pool.end();
    const d = new pg.Client({ connectionString: admin.toString() });
    await d.connect();
    await d.query(`DROP DATABASE IF EXISTS ${name} WITH (FORCE)`);
    await d.end();
  }
}

await main();
