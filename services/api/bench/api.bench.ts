/**
 * API latency under load: median and p99 of the fleet page's call (GET /api/fleet) and of a
 * one-year efficiency trend (GET /api/machines/:id/trend, 1000 buckets), 50 concurrent clients
 * (autocannon), on a temporary database seeded with a year of 1-minute results for 3 machines
 * (generate_series; invented data). Database: BENCH_DATABASE_URL, else postgres://postgres@127.0.0.1:5432.
 * Prints one JSON line per figure.
 */
import { randomBytes } from 'node:crypto';
import { ensurePartitions, migrate } from '@isentrope/store';
import autocannon from 'autocannon';
import pg from 'pg';
import { pino } from 'pino';
import { buildApp } from '../src/app.js';

const ADMIN_URL = process.env.BENCH_DATABASE_URL ?? 'postgres://postgres@127.0.0.1:5432/postgres';
const DURATION_S = Number(process.env.BENCH_DURATION_S ?? 8);
const MACHINES = 3;
const YEAR_MS = 365 * 86_400_000;

function withDatabase(url: string, name: string): string {
  const u = new URL(url);
  u.pathname = `/${name}`;
  return u.toString();
}

async function seed(pool: pg.Pool, endMs: number): Promise<number[]> {
  const fromMs = endMs - YEAR_MS;
  await ensurePartitions(pool, 'results', fromMs, endMs);
  const site = await pool.query<{ id: number }>(
    `INSERT INTO sites (slug, name, time_zone, spec) VALUES ('bench', 'Invented bench site', 'UTC', '{}') RETURNING id`,
  );
  const ids: number[] = [];
  for (let k = 0; k < MACHINES; k++) {
    const m = await pool.query<{ id: number }>(
      `INSERT INTO machines (site_id, slug, name, kind, fluid, spec) VALUES ($1, $2, $3, 'compressor', '"air"', '{}') RETURNING id`,
      [site.rows[0]!.id, `c${k}`, `Invented compressor ${k}`],
    );
    const id = m.rows[0]!.id;
    ids.push(id);
    await pool.query(
      `INSERT INTO baselines (machine_id, operating_point, reference_from, reference_to, coefficients, x_min, x_max, n, created_by)
       VALUES ($1, 'load', '2020-01-01', '2020-02-01', '{0.80,0.05}', 0.4, 1, 100, 'bench')`,
      [id],
    );
    await pool.query(
      `INSERT INTO bands (machine_id, warning, alarm, on_delay_s, off_delay_s, deadband, min_coverage, severity, require_beyond_uncertainty)
       VALUES ($1, 2, 4, 0, 0, 0, 0.5, 'high', true)`,
      [id],
    );
    // One result per minute for a year: slow loss, daily load swing, noise (invented), with the
    // baseline efficiency and drift the analysis job would store on each row (0.80 + 0.05 x).
    await pool.query(
      `INSERT INTO results (machine_id, time, efficiency, u_efficiency, operating_point, power, specific_work, valid, steady,
                            baseline_efficiency, drift, analyzed_at)
       SELECT $1, t, e, 0.004, x, 2e6, 2.1e5, random() > 0.02, true, 0.80 + 0.05 * x, 100 * (e - 0.80 - 0.05 * x), now()
         FROM generate_series($2::timestamptz, $3::timestamptz - interval '1 minute', interval '1 minute') AS t,
              LATERAL (SELECT 0.82 - 0.02 * extract(epoch FROM t - $2::timestamptz) / 31536000 + 0.003 * (random() - 0.5) AS e,
                              0.7 + 0.2 * sin(extract(epoch FROM t) / 86400 * 2 * pi()) AS x) AS v`,
      [id, new Date(fromMs), new Date(endMs)],
    );
    await pool.query(
      `INSERT INTO machine_status (machine_id, as_of, band_severity, caution) VALUES ($1, $2, 'normal', 'bench')`,
      [id, new Date(endMs)],
    );
  }
  await pool.query('ANALYZE results');
  return ids;
}

async function load(url: string): Promise<{ p50: number; p99: number; rps: number; non2xx: number }> {
  const r = await autocannon({ url, connections: 50, duration: DURATION_S });
  if (r.errors > 0 || r.timeouts > 0)
    process.stderr.write(`${url}: ${r.errors} errors, ${r.timeouts} timeouts\n`);
  return { p50: r.latency.p50, p99: r.latency.p99, rps: r.requests.average, non2xx: r.non2xx };
}

async function main(): Promise<void> {
  const name = `isentrope_bench_${randomBytes(4).toString('hex')}`;
  const admin = new pg.Client({ connectionString: ADMIN_URL });
  await admin.connect();
  await admin.query(`CREATE DATABASE ${name}`);
  await admin.end();
  const url = withDatabase(ADMIN_URL, name);
  const pool = new pg.Pool({ connectionString: url, max: 10 });
  try {
    await migrate(url);
    const endMs = Math.floor(Date.now() / 60_000) * 60_000;
    const t0 = performance.now();
    const ids = await seed(pool, endMs);
    process.stderr.write(
      `seeded ${MACHINES} x 525600 results in ${((performance.now() - t0) / 1000).toFixed(1)} s\n`,
    );
    const app = await buildApp({
      pool,
      database: { kind: 'external', displayUrl: 'bench' },
      logger: pino({ level: 'silent' }),
      version: 'bench',
      startedAt: Date.now(),
      anonymousRole: 'viewer',
      rateLimit: false,
    });
    const base = await app.listen({ port: 0, host: '127.0.0.1' });
    const from = new Date(endMs - YEAR_MS).toISOString();
    const to = new Date(endMs).toISOString();
    const trendPath = `/api/machines/${ids[0]}/trend?from=${from}&to=${to}&buckets=1000`;
    for (const path of ['/api/fleet', trendPath, trendPath, trendPath]) {
      const t1 = performance.now();
      const res = await fetch(`${base}${path}`);
      await res.text();
      process.stderr.write(
        `single ${path.slice(0, 40)}: ${res.status} in ${(performance.now() - t1).toFixed(0)} ms\n`,
      );
    }
    const fleet = await load(`${base}/api/fleet`);
    const trend = await load(`${base}/api/machines/${ids[0]}/trend?from=${from}&to=${to}&buckets=1000`);
    await app.close();
    const out = (bench: string, value: number, unit: string): void => {
      process.stdout.write(`${JSON.stringify({ bench, value, unit })}\n`);
    };
    out('api.fleet.p50', fleet.p50, 'ms');
    out('api.fleet.p99', fleet.p99, 'ms');
    out('api.fleet.throughput', fleet.rps, 'req/s');
    out('api.trend_1y.p50', trend.p50, 'ms');
    out('api.trend_1y.p99', trend.p99, 'ms');
    out('api.trend_1y.throughput', trend.rps, 'req/s');
    if (fleet.non2xx + trend.non2xx > 0)
      process.stderr.write(`non-2xx answers: ${fleet.non2xx + trend.non2xx}\n`);
  } finally {
    await pool.end();
    if (process.env.BENCH_KEEP === '1') process.stderr.write(`kept database ${url}\n`);
    else {
      const c = new pg.Client({ connectionString: ADMIN_URL });
      await c.connect();
      await c.query(`DROP DATABASE IF EXISTS ${name} WITH (FORCE)`);
      await c.end();
    }
  }
}

await main();
