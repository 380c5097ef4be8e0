/**
 * Jobs benchmarks on invented data (see src/testing/synthetic.ts): backfill throughput
 * (machine-points per second, database to database) and one incremental minute for the fleet.
 * Uses DATABASE_URL when set, else an embedded PostgreSQL in a temporary folder.
 * BENCH_MACHINES (default 20) and BENCH_DAYS (default 2) size the run; a year for 20 machines
 * does not fit the ~60 s budget of a bench script on this machine.
 */
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { migrate, openDatabase } from '@isentrope/store';
import { perfectGas } from '@isentrope/thermo';
import { defaultFluidResolver, type FluidResolver } from '../src/compute/config.js';
import { backfill, runComputeOnce } from '../src/compute/job.js';
import { seedMachine, seedSamples, seedSite } from '../src/testing/synthetic.js';

const machines = Number(process.env.BENCH_MACHINES ?? 20);
const days = Number(process.env.BENCH_DAYS ?? 2);
const AIR = perfectGas(287.05, 1005, 'air (constant cp)');
const fluids: FluidResolver = (spec) => (spec === 'air' ? AIR : defaultFluidResolver(spec));

const dataDir = await mkdtemp(join(tmpdir(), 'isentrope-bench-jobs-'));
const db = await openDatabase({ url: process.env.DATABASE_URL, dataDir });
try {
  await migrate(db.url);
  await db.pool.query('TRUNCATE results, job_watermarks');
  const t0 = Date.UTC(2026, 0, 5);
  const t1 = t0 + days * 86_400_000;
  const site = await seedSite(db.pool, `bench-${Date.now()}`);
  for (let k = 0; k < machines; k++) {
    const m = {
      slug: `bench-${k}`,
      kind: 'compressor' as const,
      pIn: 103_325,
      tIn: 293.15,
      pOut: 8e5,
      massFlow: 3,
      eta0: 0.8,
      ratePtsPerDay: -0.05,
    };
    const s = await seedMachine(db.pool, site, m);
    await seedSamples(db.pool, AIR, m, s, { fromMs: t0, toMs: t1, seed: k + 1 });
  }
  const stats = await backfill(db.pool, { from: t0, to: t1, fluids });
  process.stdout.write(
    `${JSON.stringify({ bench: 'jobs.backfill', value: stats.points / (stats.ms / 1000), unit: 'machine-points/s', machines, days })}\n`,
  );
  // One incremental minute: watermarks set to one minute before the horizon.
  await runComputeOnce(db.pool, { nowMs: t1 - 60_000, fluids, maxCatchUpMs: (days + 1) * 86_400_000 });
  const start = performance.now();
  await runComputeOnce(db.pool, { nowMs: t1, fluids });
  process.stdout.write(
    `${JSON.stringify({ bench: 'jobs.incremental_minute', value: (performance.now() - start) / 1000, unit: 's/run', machines })}\n`,
  );
} finally {
  await db.close();
  await rm(dataDir, { recursive: true, force: true });
}
