import { type RawSeries, type ResultRow, resolveComputeOptions } from '@isentrope/compute';
import { dryAir } from '@isentrope/thermo';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../../test/support/database.js';
import { loadMachines } from '../queries/machines.js';
import { readResults } from '../queries/results.js';
import { readSamples } from '../queries/samples.js';
import {
  type SeededMachine,
  type SyntheticMachine,
  seedMachine,
  seedSamples,
  seedSite,
} from '../testing/synthetic.js';
import { backfill } from './job.js';
import { ComputeWorkers } from './workers.js';

// INVENTED data (testing/synthetic.ts): an expander and a compressor on dry air, the default
// fluid model, so the worker threads (which resolve fluids themselves) can compute them.
const T0 = Date.UTC(2026, 1, 2);
const H = 3_600_000;
const END = T0 + 20 * H;
const MACHINES: readonly SyntheticMachine[] = [
  {
    slug: 'ex-9',
    kind: 'turbine',
    pIn: 6e5,
    tIn: 520,
    pOut: 1.5e5,
    massFlow: 5,
    eta0: 0.84,
    ratePtsPerDay: 0,
  },
  {
    slug: 'ac-9',
    kind: 'compressor',
    pIn: 103_325,
    tIn: 293.15,
    pOut: 8e5,
    massFlow: 3,
    eta0: 0.8,
    ratePtsPerDay: 0,
  },
];

let db: TestDatabase;
let seeded: SeededMachine[];

beforeAll(async () => {
  db = await createTestDatabase();
  const site = await seedSite(db.pool);
  seeded = [];
  for (const [k, m] of MACHINES.entries()) {
    const s = await seedMachine(db.pool, site, m);
    await seedSamples(db.pool, dryAir(), m, s, { fromMs: T0 - 2 * H, toMs: END + H, seed: 40 + k });
    seeded.push(s);
  }
  await db.pool.query('UPDATE samples SET quality = 192');
});

afterAll(async () => {
  await db?.drop();
});

async function results(): Promise<ResultRow[][]> {
  return Promise.all(seeded.map((s) => readResults(db.pool, s.machineId, T0, END)));
}

describe('backfill on compute worker threads', () => {
  it('writes exactly the rows the main thread writes, stored findings flagged alike', async () => {
    // A stored gauge/absolute finding on ac-9's inlet over [T0 + 5 h, T0 + 8 h) (invented).
    const ac = seeded[1] as SeededMachine;
    await db.pool.query(
      `INSERT INTO instrument_findings (machine_id, tag_id, role, kind, at, ended_at, status, direction, likely_cause,
                                        shift_pa, shift_ambients, level_before_pa, level_after_pa, ambient_pa, cross_check)
       VALUES ($1, $2, 'inletPressure', 'gauge-absolute', to_timestamp($3::float8 / 1000), to_timestamp($4::float8 / 1000),
               'reverted', 'reads-high', 'absolute transmitter on a gauge tag', 101325, 1, 103325, 204650, 101325, 'mix-up')`,
      [ac.machineId, ac.tagIds.inletPressure, T0 + 5 * H, T0 + 8 * H],
    );
    const inProcess = await backfill(db.pool, { from: T0, to: END, workers: 0 });
    expect(inProcess.workers).toBe(0);
    const expected = await results();
    expect(expected.map((r) => r.length)).toEqual([20 * 60, 20 * 60]);
    expect(expected.flat().filter((r) => r.valid && r.efficiency !== null).length).toBeGreaterThan(1000);
    const flaggedTimes = (expected[1] ?? [])
      .filter((r) => r.flags.includes('fault:gauge-absolute:inletPressure') && !r.valid)
      .map((r) => r.time);
    expect(flaggedTimes).toEqual(Array.from({ length: 3 * 60 }, (_, k) => T0 + 5 * H + k * 60_000));

    // Chunks of 5 hours: several tasks per machine, handed to two threads.
    const onWorkers = await backfill(db.pool, { from: T0, to: END, workers: 2, chunkMs: 5 * H });
    expect(onWorkers.workers).toBe(2);
    expect(onWorkers.points).toBe(inProcess.points);
    expect(await results()).toEqual(expected);
  });

  it('moves arrays that own their buffer to the worker and copies views into a shared one', async () => {
    const [row] = await loadMachines(db.pool, [seeded[0]?.machineId as number]);
    if (row === undefined) throw new Error('seeded machine not found');
    const ids = row.tags.map((t) => t.id);
    const samples = await readSamples(db.pool, ids, T0 - 2 * H, T0 + 3 * H);
    // One series rebuilt as views into one larger buffer that also holds other data.
    const [firstId, first] = [...samples.entries()][0] as [number, RawSeries];
    const n = first.t.length;
    const shared = new ArrayBuffer(8 * (2 * n + 1));
    const t = new Float64Array(shared, 8, n);
    t.set(Array.from(first.t));
    const value = new Float64Array(shared, 8 * (n + 1), n);
    value.set(Array.from(first.value));
    samples.set(firstId, { t, value, quality: first.quality });
    const owned = (samples.get(ids.find((id) => id !== firstId) as number) as RawSeries).t as Float64Array;
    const workers = new ComputeWorkers(1);
    try {
      const out = await workers.compute(row, samples, T0, T0 + H, resolveComputeOptions({}));
      expect(out.rows).toBe(60);
    } finally {
      await workers.close();
    }
    expect(shared.byteLength).toBe(8 * (2 * n + 1)); // copied, still usable here
    expect(t[0]).toBe(first.t[0]);
    expect(owned.buffer.byteLength).toBe(0); // moved: detached here
  });
});
