import { ensurePartitions } from '@isentrope/store';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../../test/support/database.js';
import { earliestSample, readSamples } from './samples.js';

const T0 = Date.UTC(2026, 4, 31, 23, 0); // the range crosses a monthly partition boundary
const MINUTE = 60_000;

describe('readSamples (binary COPY out) on PostgreSQL', () => {
  let db: TestDatabase;
  beforeAll(async () => {
    db = await createTestDatabase();
    await ensurePartitions(db.pool, 'samples', T0 - 86_400_000, T0 + 86_400_000);
    const site = await db.pool.query<{ id: number }>(
      `INSERT INTO sites (slug, name, time_zone, spec) VALUES ('s', 'Test works (invented)', 'UTC', '{}') RETURNING id`,
    );
    for (const name of ['A', 'B']) {
      await db.pool.query(
        `INSERT INTO tags (site_id, name, role, unit, spec) VALUES ($1, $2, 'inletPressure', 'bar', '{}')`,
        [site.rows[0]?.id, name],
      );
    }
    // Inserted in a scrambled order, so the heap holds them out of time order.
    const order = [7, 2, 9, 0, 4, 1, 8, 3, 6, 5];
    for (const k of order)
      for (const tag of [1, 2])
        await db.pool.query(
          'INSERT INTO samples (tag_id, time, value, quality) VALUES ($1, to_timestamp($2::float8 / 1000), $3, $4)',
          [tag, T0 + k * 7 * MINUTE + 123, tag * 1000 + k + 0.25, k === 4 ? 64 : 192],
        );
  });
  afterAll(async () => {
    await db.drop();
  });

  it('returns each tag sorted by time, with values, qualities and millisecond times as stored', async () => {
    const got = await readSamples(db.pool, [1, 2], T0, T0 + 70 * MINUTE);
    expect([...got.keys()].sort()).toEqual([1, 2]);
    for (const tag of [1, 2]) {
      const s = got.get(tag);
      expect(Array.from(s?.t ?? [])).toEqual(Array.from({ length: 10 }, (_, k) => T0 + k * 7 * MINUTE + 123));
      expect(Array.from(s?.value ?? [])).toEqual(Array.from({ length: 10 }, (_, k) => tag * 1000 + k + 0.25));
      expect(Array.from(s?.quality ?? [])).toEqual(
        Array.from({ length: 10 }, (_, k) => (k === 4 ? 64 : 192)),
      );
    }
  });

  it('keeps from <= time < to, and leaves out tags with no rows', async () => {
    const from = T0 + 7 * MINUTE + 123;
    const to = T0 + 5 * 7 * MINUTE + 123;
    const got = await readSamples(db.pool, [2, 99], from, to);
    expect([...got.keys()]).toEqual([2]);
    expect(Array.from(got.get(2)?.t ?? [])).toEqual([1, 2, 3, 4].map((k) => T0 + k * 7 * MINUTE + 123));
    expect((await readSamples(db.pool, [], from, to)).size).toBe(0);
    expect((await readSamples(db.pool, [1], to, from)).size).toBe(0);
  });

  it('refuses a tag id that is not an integer (COPY takes no bind parameters)', async () => {
    await expect(readSamples(db.pool, [1.5], T0, T0 + MINUTE)).rejects.toThrow(/not an integer/);
  });

  it('earliestSample finds the first time of the given tags', async () => {
    expect(await earliestSample(db.pool, [1, 2])).toBe(T0 + 123);
    expect(await earliestSample(db.pool, [99])).toBeUndefined();
  });
});
