import type { ResultRow } from '@isentrope/compute';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../../test/support/database.js';
import { ensureResultPartitions, readResults, replaceResultsRange, writeResults } from './results.js';

const T0 = Date.UTC(2026, 2, 31, 23, 58); // two rows in March, two in April: two partitions
const MINUTE = 60_000;

/** A row whose every numeric column holds its own value, so a column written to the wrong place shows. */
function row(machineId: number, k: number, over: Partial<ResultRow> = {}): ResultRow {
  const v = (slot: number): number => 1000 * (k + 1) + slot + 0.125;
  return {
    machineId,
    time: T0 + k * MINUTE,
    pIn: v(1),
    tIn: v(2),
    hIn: v(3),
    sIn: v(4),
    pOut: v(5),
    tOut: v(6),
    hOut: v(7),
    sOut: v(8),
    tOutS: v(9),
    hOutS: v(10),
    massFlow: v(11),
    efficiency: v(12),
    uEfficiency: v(13),
    polytropicEfficiency: v(14),
    uPolytropicEfficiency: v(15),
    specificWork: v(16),
    uSpecificWork: v(17),
    power: v(18),
    uPower: v(19),
    entropyGeneration: v(20),
    uEntropyGeneration: -v(21),
    operatingPoint: v(22),
    steady: k % 2 === 0,
    flags: [],
    valid: k % 3 !== 0,
    ...over,
  };
}

describe('results writers (binary COPY and upsert) on PostgreSQL', () => {
  let db: TestDatabase;
  beforeAll(async () => {
    db = await createTestDatabase();
    await ensureResultPartitions(db.pool, T0, T0 + 10 * MINUTE);
  });
  afterAll(async () => {
    await db.drop();
  });

  const rows = (machineId: number): ResultRow[] => [
    row(machineId, 0),
    row(machineId, 1, { flags: ['not-steady'], efficiency: null, uEfficiency: Number.NaN }),
    row(machineId, 2, {
      flags: ['missing:massFlow', 'fault:stuck:outletTemperature', 'note with ünïcode'],
      power: Number.POSITIVE_INFINITY,
    }),
    row(machineId, 3, { pIn: 0, operatingPoint: 0 }),
  ];

  it('replaceResultsRange writes every column where readResults finds it, NULL for missing and non-finite', async () => {
    await replaceResultsRange(db.pool, 1, T0, T0 + 4 * MINUTE, rows(1));
    const back = await readResults(db.pool, 1, T0, T0 + 4 * MINUTE);
    const expected = rows(1).map((r) => ({
      ...r,
      uEfficiency: r.uEfficiency !== null && Number.isFinite(r.uEfficiency) ? r.uEfficiency : null,
      power: r.power !== null && Number.isFinite(r.power) ? r.power : null,
    }));
    expect(back).toEqual(expected);
  });

  it('the upsert writes the same rows as the COPY path', async () => {
    await writeResults(db.pool, rows(2));
    const copy = (await readResults(db.pool, 1, T0, T0 + 4 * MINUTE)).map(({ machineId: _, ...r }) => r);
    const upsert = (await readResults(db.pool, 2, T0, T0 + 4 * MINUTE)).map(({ machineId: _, ...r }) => r);
    expect(upsert).toEqual(copy);
  });

  it('a second replace of a range leaves only the new rows, and rows outside it alone', async () => {
    await replaceResultsRange(db.pool, 1, T0 + MINUTE, T0 + 3 * MINUTE, [row(1, 1, { efficiency: 0.5 })]);
    const back = await readResults(db.pool, 1, T0, T0 + 4 * MINUTE);
    expect(back.map((r) => (r.time - T0) / MINUTE)).toEqual([0, 1, 3]);
    expect(back[1]?.efficiency).toBe(0.5);
  });

  it('refuses a row of another machine or outside the range, and writes nothing', async () => {
    await expect(
      replaceResultsRange(db.pool, 3, T0, T0 + 2 * MINUTE, [row(3, 0), row(3, 2)]),
    ).rejects.toThrow(/outside the machine and range/);
    expect(await readResults(db.pool, 3, T0, T0 + 4 * MINUTE)).toEqual([]);
  });
});
