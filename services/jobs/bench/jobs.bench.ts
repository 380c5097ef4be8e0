/**
 * Jobs benchmarks on INVENTED data: backfill throughput (machine-points per second, database to
 * database: samples read, computed, results written) over a mix of machine kinds (steam turbine
 * and boiler feed pump on IAPWS-IF97, air compressor and fan on dry air, natural-gas compressor on
 * Peng-Robinson), and the time of one incremental minute for a fleet.
 *
 * A temporary database is made on TEST_DATABASE_URL (default postgres://postgres@127.0.0.1:5432/
 * postgres) and dropped after. Sizes: BENCH_MACHINES (default 20, four of each kind), BENCH_DAYS
 * (default 14; the full case of one year is BENCH_DAYS=365, about 10 million machine-points and
 * 60 million samples, which takes long to seed), BENCH_FLEET (default 200 machines for the
 * incremental minute), BENCH_RUNS (the backfill runs to measure, for example "backfill" for the
 * year-long case; default all of them). The backfill is measured on compute worker threads (the default), on the
 * main thread alone (workers: 0), as a repair (the range's rows replaced) and on a 5-minute grid.
 * Samples are vacuumed after seeding and every run but the repair starts on an empty results
 * table, so each figure is of a first backfill of history written some time before.
 */
import { randomBytes } from 'node:crypto';
import { defaultFluidResolver } from '@isentrope/compute';
import { ensurePartitions, migrate } from '@isentrope/store';
import { dryAir, type Fluid, normalVolumeFlowToMassFlow } from '@isentrope/thermo';
import pg from 'pg';
import { backfill, runComputeOnce } from '../src/compute/job.js';
import { ComputeWorkers } from '../src/compute/workers.js';

const MACHINES = Number(process.env.BENCH_MACHINES ?? 20);
const DAYS = Number(process.env.BENCH_DAYS ?? 14);
const FLEET = Number(process.env.BENCH_FLEET ?? 200);
/** Backfill runs to measure (comma-separated names without "jobs."); default all. */
const RUNS = process.env.BENCH_RUNS?.split(',').map((r) => `jobs.${r.trim()}`);
const ADMIN = process.env.TEST_DATABASE_URL ?? 'postgres://postgres@127.0.0.1:5432/postgres';
const AMBIENT = 1.013e5; // [Pa], the invented site's '1.013 bara'
const H = 3_600_000;
const DAY = 86_400_000;

interface KindSpec {
  readonly kind: 'turbine' | 'compressor' | 'pump' | 'fan';
  readonly fluid: unknown;
  readonly ratedFlow: string;
  /** Tags: role, unit, uncertainty spec, design reading [tag unit], noise sd [tag unit], follows load. */
  readonly tags: readonly (readonly [string, string, unknown, number, number, boolean])[];
}

type Outlet = (
  f: Fluid,
  pIn: number,
  tIn: number,
  pOut: number,
  eta: number,
  turbine: boolean,
) => { tOut: number; dh: number };

/** Outlet temperature [K] and enthalpy change [J/kg] at an invented efficiency, from the thermo models. */
const outlet: Outlet = (f, pIn, tIn, pOut, eta, turbine) => {
  const a = f.statePT(pIn, tIn);
  const hs = f.statePS(pOut, a.s).h;
  const hOut = turbine ? a.h - eta * (a.h - hs) : a.h + (hs - a.h) / eta;
  return { tOut: f.statePH(pOut, hOut).T, dh: Math.abs(hOut - a.h) };
};
const abs = (a: number) => ({ absolute: a });
const span = (p: number, s: number) => ({ percentOfSpan: p, span: s });
const rdg = (p: number) => ({ percentOfReading: p });

/** The water machines: a back-pressure steam turbine and a boiler feed pump (IAPWS-IF97). */
function waterKinds(): KindSpec[] {
  const water = defaultFluidResolver('water');
  const st = outlet(water, 40e5 + AMBIENT, 673.15, 3.5e5 + AMBIENT, 0.8, true);
  const bfp = outlet(water, 5e5 + AMBIENT, 378.15, 60e5 + AMBIENT, 0.75, false);
  return [
    {
      kind: 'turbine',
      fluid: 'water',
      ratedFlow: '60 t/h',
      tags: [
        ['inletPressure', 'barg', span(0.1, 60), 40, 0.02, false],
        ['inletTemperature', 'degC', abs(1), 400, 0.2, false],
        ['outletPressure', 'barg', span(0.1, 10), 3.5, 0.005, false],
        ['outletTemperature', 'degC', abs(1), st.tOut - 273.15, 0.2, false],
        ['massFlow', 't/h', rdg(1), 60, 0.1, true],
        ['electricalPower', 'MW', rdg(0.5), ((60 / 3.6) * st.dh * 0.975) / 1e6, 0.005, true],
      ],
    },
    {
      kind: 'pump',
      fluid: 'water',
      ratedFlow: '30 t/h',
      tags: [
        ['inletPressure', 'barg', span(0.1, 10), 5, 0.005, false],
        ['inletTemperature', 'degC', abs(0.2), 105, 0.005, false],
        ['outletPressure', 'barg', span(0.1, 80), 60, 0.02, false],
        ['outletTemperature', 'degC', abs(0.2), bfp.tOut - 273.15, 0.005, false],
        ['massFlow', 't/h', rdg(1), 30, 0.05, true],
        ['electricalPower', 'kW', rdg(0.5), ((30 / 3.6) * bfp.dh) / 0.95 / 1e3, 0.2, true],
      ],
    },
  ];
}

/** The gas machines: an air compressor, a natural-gas compressor (Peng-Robinson) and a fan. */
function gasKinds(): KindSpec[] {
  const air = defaultFluidResolver('air');
  const gas = defaultFluidResolver({
    composition: { CH4: 0.92, C2H6: 0.04, C3H8: 0.01, N2: 0.02, CO2: 0.01 },
    model: 'peng-robinson',
  });
  const ac = outlet(air, AMBIENT - 1500, 293.15, 7e5 + AMBIENT, 0.82, false);
  const gb = outlet(gas, 20e5 + AMBIENT, 288.15, 35e5 + AMBIENT, 0.78, false);
  const fan = outlet(air, AMBIENT - 500, 423.15, AMBIENT + 2500, 0.8, false);
  const acMass = normalVolumeFlowToMassFlow(2600 / 3600, dryAir().molarMass, 'normal');
  const fanMass = (110_000 / 3600) * air.statePT(AMBIENT - 500, 423.15).v ** -1;
  return [
    {
      kind: 'compressor',
      fluid: 'air',
      ratedFlow: '2600 Nm3/h',
      tags: [
        ['inletPressure', 'mbarg', abs(1), -15, 0.5, false],
        ['inletTemperature', 'degC', abs(0.3), 20, 0.1, false],
        ['outletPressure', 'barg', span(0.1, 10), 7, 0.005, false],
        ['outletTemperature', 'degC', abs(0.5), ac.tOut - 273.15, 0.2, false],
        ['volumeFlow', 'Nm3/h', rdg(1.5), 2600, 5, true],
        ['electricalPower', 'kW', rdg(0.5), (acMass * ac.dh) / 0.96 / 1e3, 0.3, true],
      ],
    },
    {
      kind: 'compressor',
      fluid: {
        composition: { CH4: 0.92, C2H6: 0.04, C3H8: 0.01, N2: 0.02, CO2: 0.01 },
        model: 'peng-robinson',
      },
      ratedFlow: '36 t/h',
      tags: [
        ['inletPressure', 'barg', span(0.1, 40), 20, 0.01, false],
        ['inletTemperature', 'degC', abs(0.3), 15, 0.1, false],
        ['outletPressure', 'barg', span(0.1, 40), 35, 0.01, false],
        ['outletTemperature', 'degC', abs(0.5), gb.tOut - 273.15, 0.2, false],
        ['massFlow', 't/h', rdg(1), 36, 0.05, true],
        ['electricalPower', 'kW', rdg(0.5), ((36 / 3.6) * gb.dh) / 0.965 / 1e3, 1, true],
      ],
    },
    {
      kind: 'fan',
      fluid: 'air',
      ratedFlow: '110000 m3/h',
      tags: [
        ['inletPressure', 'mbarg', abs(0.2), -5, 0.1, false],
        ['inletTemperature', 'degC', abs(0.5), 150, 0.1, false],
        ['outletPressure', 'mbarg', abs(0.2), 25, 0.1, false],
        ['outletTemperature', 'degC', abs(0.5), fan.tOut - 273.15, 0.1, false],
        ['volumeFlow', 'm3/h', rdg(2), 110_000, 200, true],
        ['electricalPower', 'kW', rdg(0.5), (fanMass * fan.dh) / 0.95 / 1e3, 0.3, true],
      ],
    },
  ];
}

/** Design readings from the thermo models at an invented efficiency. */
function kinds(): KindSpec[] {
  return [...waterKinds(), ...gasKinds()];
}

/** Machines and their samples (generate_series in SQL: a slow +-5 % load swing and uniform noise). */
async function seed(pool: pg.Pool, site: number, n: number, prefix: string, fromMs: number, toMs: number) {
  const specs = kinds();
  const ids: number[] = [];
  for (let k = 0; k < n; k++) {
    const s = specs[k % specs.length] as KindSpec;
    const slug = `${prefix}-${k}`;
    const m = await pool.query<{ id: number }>(
      `INSERT INTO machines (site_id, slug, name, kind, fluid, ratings, key_tags, baseline_spec, spec, driver_efficiency)
       VALUES ($1, $2, $3, $4, $5, $6, $7, '{"operatingPoint":"massFlow"}', '{}', 0.96) RETURNING id`,
      [
        site,
        slug,
        `${slug} (invented)`,
        s.kind,
        JSON.stringify(s.fluid),
        JSON.stringify({ ratedFlow: s.ratedFlow }),
        [`${slug}.flow`, `${slug}.inletPressure`],
      ],
    );
    const machineId = (m.rows[0] as { id: number }).id;
    ids.push(machineId);
    for (const [role, unit, u, design, sd, load] of s.tags) {
      const name = role === 'massFlow' || role === 'volumeFlow' ? `${slug}.flow` : `${slug}.${role}`;
      const t = await pool.query<{ id: number }>(
        `INSERT INTO tags (site_id, machine_id, name, role, unit, uncertainty, spec) VALUES ($1, $2, $3, $4, $5, $6, '{}') RETURNING id`,
        [site, machineId, name, role, unit, JSON.stringify(u)],
      );
      const tagId = (t.rows[0] as { id: number }).id;
      // Quality takes the column default (192, good). sqrt(12) makes the uniform noise's sd = sd.
      await pool.query(
        `INSERT INTO samples (tag_id, time, value)
         SELECT $1, g, $2::float8 * (1 + $3::float8 * sin(2 * pi() * extract(epoch FROM g) / 21600 + $4::float8))
                       + $5::float8 * (random() - 0.5) * sqrt(12)
           FROM generate_series(to_timestamp($6::float8 / 1000), to_timestamp($7::float8 / 1000) - interval '1 ms', interval '1 minute') AS g`,
        [tagId, design, load ? 0.05 : 0, k, sd, fromMs + 10_000, toMs],
      );
    }
  }
  return ids;
}

const name = `isentrope_bench_jobs_${randomBytes(4).toString('hex')}`;
const admin = new pg.Client({ connectionString: ADMIN });
await admin.connect();
await admin.query(`CREATE DATABASE ${name}`);
const url = new URL(ADMIN);
url.pathname = `/${name}`;
const pool = new pg.Pool({ connectionString: url.toString(), max: 8 });
// A connection cut when the database is dropped at the end must not crash the script.
pool.on('error', () => {});
try {
  await migrate(url.toString());
  const site = await pool.query<{ id: number }>(
    `INSERT INTO sites (slug, name, time_zone, ambient_pressure, spec) VALUES ('bench', 'Bench works (invented)', 'UTC', '1.013 bara', '{}') RETURNING id`,
  );
  const siteId = (site.rows[0] as { id: number }).id;

  // Backfill: MACHINES machines over DAYS days.
  const t0 = Date.UTC(2026, 0, 5);
  const t1 = t0 + DAYS * DAY;
  await ensurePartitions(pool, 'samples', t0 - DAY, t1 + DAY);
  const mix = await seed(pool, siteId, MACHINES, 'mix', t0 - 2 * H, t1 + H);
  // History in a plant's database was written long before a backfill reads it and has been
  // vacuumed since; samples read straight after a bulk load would first have their hint bits set
  // (a write of every page on the first read), which is not the backfill's cost.
  await pool.query('VACUUM (ANALYZE) samples');
  // One set of worker threads for all the runs, started and warmed up (the compiler's work, and
  // the database's caches) on a first untimed pass over (at most 14 days of) the range, as the
  // first minutes of a one-year backfill would; the figures are of the steady rate.
  const threads = new ComputeWorkers();
  const warmTo = Math.min(t1, t0 + 14 * DAY);
  await backfill(pool, { from: t0, to: warmTo, machineIds: mix, workers: threads });
  await backfill(pool, { from: t0, to: Math.min(warmTo, t0 + 3 * DAY), machineIds: mix, workers: 0 });
  // Each run but the repair starts on an empty, vacuumed range of results (a first backfill); the
  // repair run replaces the rows the run before it wrote (DELETE and COPY in one transaction).
  for (const [name, workers, gridMs, empty] of [
    ['jobs.backfill', threads, 60_000, true],
    ['jobs.backfill_main_thread', 0, 60_000, true],
    ['jobs.backfill_repair', threads, 60_000, false],
    ['jobs.backfill_5min_grid', threads, 300_000, true],
  ] as const) {
    if (RUNS !== undefined && !RUNS.includes(name)) continue;
    if (empty) {
      await pool.query('TRUNCATE results');
      await pool.query('VACUUM (ANALYZE) results');
    }
    const stats = await backfill(pool, { from: t0, to: t1, machineIds: mix, gridMs, workers });
    process.stdout.write(
      `${JSON.stringify({ bench: name, value: stats.points / (stats.ms / 1000), unit: 'machine-points/s', machines: MACHINES, days: DAYS, points: stats.points, workers: stats.workers })}\n`,
    );
  }
  await threads.close();

  // Incremental minute: FLEET machines with three hours of samples, caught up to one minute
  // before the horizon, then one run timed.
  const s0 = t1 + 10 * DAY;
  await ensurePartitions(pool, 'samples', s0, s0 + DAY);
  const fleet = await seed(pool, siteId, FLEET, 'fleet', s0, s0 + 4 * H);
  await pool.query('ANALYZE samples');
  const now = s0 + 3 * H;
  // Watermarks one minute behind the run timed below.
  const warm = await runComputeOnce(pool, { nowMs: now - 60_000, machineIds: fleet, maxCatchUpMs: DAY });
  if (warm.failed > 0) throw new Error(`${warm.failed} machines failed the catch-up run`);
  const start = performance.now();
  const run = await runComputeOnce(pool, { nowMs: now, machineIds: fleet });
  const seconds = (performance.now() - start) / 1000;
  if (run.points !== FLEET) throw new Error(`the timed run wrote ${run.points} rows, expected ${FLEET}`);
  process.stdout.write(
    `${JSON.stringify({ bench: 'jobs.incremental_minute', value: seconds, unit: 's/run', machines: FLEET })}\n`,
  );
} finally {
  await pool.end();
  // BENCH_KEEP=1 keeps the database for a closer look (its name goes to stderr).
  if (process.env.BENCH_KEEP === '1') process.stderr.write(`kept ${name}\n`);
  else await admin.query(`DROP DATABASE IF EXISTS ${name} WITH (FORCE)`);
  await admin.end();
}
