/**
 * Store benchmarks: batch writer (without and with rollups) vs psql \copy on the same rows
 * (alternating rounds, best of each, since the host is shared), the invented demo plant's
 * first-start load (43 tags, 1-minute samples over 14 days, batches of 50,000), re-sent
 * batches, trend medians (one year from the hourly rollup, one day of 1 s raw data), and
 * bytes per sample with and without compression. Creates and drops its own database on
 * TEST_DATABASE_URL's server (or the local one). Prints one JSON line per figure; the host
 * load average is printed too, because every figure here is wall time. Data are invented
 * (smooth signals plus noise).
 */
import { execFileSync } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { rmSync, writeFileSync } from 'node:fs';
import { loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import pg from 'pg';
import { migrate } from '../src/migrate.js';
import { ensurePartitions } from '../src/partitions.js';
import { QUALITY_GOOD } from '../src/quality.js';
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

/** `tags` series of `n` samples `stepMs` apart, tag-major (invented data). */
function rows(tags: number, n: number, start: number, tagBase = 1, stepMs = 1000): SampleInput[] {
  const out: SampleInput[] = [];
  for (let tag = tagBase; tag < tagBase + tags; tag++) {
    let v = 50 + tag;
    for (let i = 0; i < n; i++) {
      v += Math.sin(i * 0.001 + tag) * 0.02 + (((i * 2654435761 + tag) >>> 0) / 2 ** 32 - 0.5) * 0.01;
      out.push({ tagId: tag, time: start + i * stepMs, value: v, quality: QUALITY_GOOD });
    }
  }
  return out;
}

/** The demo plant's shape: every tag at each minute, time-major as the demo generates it. */
function demoRows(tags: number, days: number, start: number): SampleInput[] {
  const out: SampleInput[] = [];
  for (let t = start; t < start + days * 86_400_000; t += 60_000) {
    for (let tag = 1; tag <= tags; tag++) {
      out.push({
        tagId: 5000 + tag,
        time: t,
        value: 100 + tag + Math.sin(t / 3.6e6 + tag),
        quality: QUALITY_GOOD,
      });
    }
  }
  return out;
}

async function writeAll(
  pool: pg.Pool,
  data: readonly SampleInput[],
  rollups: boolean,
): Promise<{ seconds: number; writer: SampleWriter }> {
  const w = new SampleWriter(pool, { batchSize: 50_000, flushIntervalMs: 0, rollups });
  const t = performance.now();
  for (let i = 0; i < data.length; i += 50_000) await w.write(data.slice(i, i + 50_000));
  await w.close();
  return { seconds: (performance.now() - t) / 1000, writer: w };
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
    emit('store.host.loadavg_1min_at_start', loadavg()[0] ?? 0, 'load');
    const start = Date.UTC(2026, 0, 1);
    const data = rows(50, 10_000, start); // 500,000 rows
    for (const table of ['samples', 'samples_1m', 'samples_1h'] as const)
      await ensurePartitions(pool, table, start, start + 86_400_000);
    const clear = (): Promise<unknown> => pool.query('TRUNCATE samples, tag_last, samples_1m, samples_1h');

    // psql \copy of the same rows, same table, text format (what an operator would use).
    writeFileSync(
      csv,
      data
        .map((r) => `${r.tagId}\t${new Date(r.time as number).toISOString()}\t${r.value}\t${r.quality}\n`)
        .join(''),
    );
    // Rounds alternate psql, the writer without and with rollups on the same rows; the
    // best of each is reported (the least disturbed on a shared host), and the range of the
    // per-round ratios beside it.
    let psqlRate = 0;
    let writerRate = 0;
    let rollupRate = 0;
    let withRollups: SampleWriter | undefined;
    const roundRatios: number[] = [];
    let t = 0;
    for (let round = 0; round < 3; round++) {
      t = performance.now();
      execFileSync('psql', [
        '-q',
        '-v',
        'ON_ERROR_STOP=1',
        url.toString(),
        '-c',
        `\\copy samples (tag_id, time, value, quality) FROM '${csv}'`,
      ]);
      const psqlRound = data.length / ((performance.now() - t) / 1000);
      psqlRate = Math.max(psqlRate, psqlRound);
      await clear();
      const plain = await writeAll(pool, data, false);
      writerRate = Math.max(writerRate, data.length / plain.seconds);
      await clear();
      const rolled = await writeAll(pool, data, true);
      const rollupRound = data.length / rolled.seconds;
      roundRatios.push(rollupRound / psqlRound);
      if (rollupRound > rollupRate) {
        rollupRate = rollupRound;
        withRollups = rolled.writer;
      }
      if (round < 2) await clear();
    }
    emit('store.copy.psql', psqlRate, 'rows/s');
    emit('store.writer.no_rollups', writerRate, 'rows/s');
    emit('store.writer.ratio_to_psql', writerRate / psqlRate, 'ratio');
    emit('store.writer.with_rollups', rollupRate, 'rows/s');
    emit('store.writer.with_rollups.ratio_to_psql', rollupRate / psqlRate, 'ratio');
    emit('store.writer.with_rollups.ratio_to_psql.round_min', Math.min(...roundRatios), 'ratio');
    emit('store.writer.with_rollups.ratio_to_psql.round_max', Math.max(...roundRatios), 'ratio');
    for (const [phase, ms] of Object.entries(withRollups!.stats.phaseMs))
      emit(`store.writer.with_rollups.phase.${phase}`, ms / 1000, 's');

    // Re-sent batches (staging path, nothing new), without refs and with them (as the HTTP
    // push and CSV send them, so the outcome names the duplicates); rounds alternate, best
    // and worst of each reported.
    const resent = data.slice(0, 100_000);
    const resentRefs = resent.map((r, i) => ({ ...r, ref: i }));
    const resend: Record<'plain' | 'refs', number[]> = { plain: [], refs: [] };
    for (let round = 0; round < 3; round++) {
      for (const [kind, rowsOf] of [
        ['plain', resent],
        ['refs', resentRefs],
      ] as const) {
        t = performance.now();
        await writeAll(pool, rowsOf, true);
        resend[kind].push(rowsOf.length / ((performance.now() - t) / 1000));
      }
    }
    emit('store.writer.resend_dedupe', Math.max(...resend.plain), 'rows/s');
    emit('store.writer.resend_dedupe.round_min', Math.min(...resend.plain), 'rows/s');
    emit('store.writer.resend_dedupe_refs', Math.max(...resend.refs), 'rows/s');
    emit('store.writer.resend_dedupe_refs.round_min', Math.min(...resend.refs), 'rows/s');
    await clear();

    // The demo plant's first start: 43 tags x 1-minute samples x 14 days, rollups on.
    const demo = demoRows(43, 14, Date.UTC(2025, 10, 1));
    const d = await writeAll(pool, demo, true);
    emit('store.writer.demo_first_start.seconds', d.seconds, 's');
    emit('store.writer.demo_first_start.rate', demo.length / d.seconds, 'rows/s');
    for (const [phase, ms] of Object.entries(d.writer.stats.phaseMs))
      emit(`store.writer.demo_first_start.phase.${phase}`, ms / 1000, 's');
    await clear();

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
      `INSERT INTO samples SELECT 999, t, 50 + sin(extract(epoch FROM t) / 86400.0), 192
         FROM generate_series($1::timestamptz, $2::timestamptz - interval '1 s', interval '1 s') AS t`,
      [new Date(y1 - 86_400_000).toISOString(), new Date(y1).toISOString()],
    );
    await pool.query('VACUUM ANALYZE samples, samples_1m, samples_1h');
    for (const [label, from, to] of [
      ['year_1000_buckets', y0, y1],
      ['day_1000_buckets_raw', y1 - 86_400_000, y1],
    ] as const) {
      const times: number[] = [];
      for (let i = 0; i < 11; i++) {
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
      emit(`store.trend.${label}.median`, times[5]!, 'ms');
    }

    // Bytes on disk per sample: 4 tags x 1 day, raw in one month, swinging-door in another.
    const raw = rows(4, 86_400, Date.UTC(2024, 0, 1), 100);
    const comp = rows(4, 86_400, Date.UTC(2024, 1, 1), 200);
    const wr = new SampleWriter(pool, { batchSize: 50_000, flushIntervalMs: 0, rollups: false });
    for (let i = 0; i < raw.length; i += 50_000) await wr.write(raw.slice(i, i + 50_000));
    await wr.close();
    const compression = new Map(
      Array.from({ length: 4 }, (_, k) => [200 + k, { method: 'swinging-door' as const, deviation: 0.05 }]),
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
    emit('store.host.loadavg_1min_at_end', loadavg()[0] ?? 0, 'load');
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
