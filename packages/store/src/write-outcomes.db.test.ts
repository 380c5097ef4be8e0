import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../test/support/database.js';
import type { SampleRow } from './copy-binary.js';
import { QUALITY_GOOD } from './quality.js';
import { SampleWriter, type WriteConflict, writeSampleBatch } from './samples-writer.js';

let db: TestDatabase;
beforeAll(async () => {
  db = await createTestDatabase();
});
afterAll(async () => {
  await db.drop();
});

const T0 = Date.UTC(2026, 4, 4, 6, 0, 0);

/** Invented test data: one sample a second per tag (value a function of time), `ref` = position in the list. */
function batch(tagIds: readonly number[], n: number, start = T0): SampleRow[] {
  const out: SampleRow[] = [];
  for (const tagId of tagIds)
    for (let i = 0; i < n; i++)
      out.push({
        tagId,
        time: start + i * 1000,
        value: 20 + tagId + (start + i * 1000 - T0) / 8000,
        quality: QUALITY_GOOD,
        ref: out.length,
      });
  return out;
}

/** Every stored sample of the tags and their rollups, as text (to compare before and after). */
async function snapshot(tagIds: readonly number[]): Promise<unknown> {
  const r = await db.pool.query(
    `SELECT (SELECT string_agg(tag_id || ' ' || time || ' ' || float8send(value) || ' ' || quality, ',' ORDER BY tag_id, time)
               FROM samples WHERE tag_id = ANY($1)) AS s,
            (SELECT string_agg(m::text, ',' ORDER BY tag_id, bucket) FROM samples_1m m WHERE tag_id = ANY($1)) AS m,
            (SELECT string_agg(h::text, ',' ORDER BY tag_id, bucket) FROM samples_1h h WHERE tag_id = ANY($1)) AS h,
            (SELECT string_agg(l::text, ',' ORDER BY tag_id) FROM tag_last l WHERE tag_id = ANY($1)) AS l`,
    [tagIds],
  );
  return r.rows[0];
}

const byRef = (a: WriteConflict, b: WriteConflict): number => (a.ref ?? 0) - (b.ref ?? 0);
const sortedRefs = (refs: readonly number[] | undefined): number[] | undefined =>
  refs === undefined ? undefined : [...refs].sort((a, b) => a - b);

describe('write outcomes (first stored value kept)', () => {
  it('a re-sent batch is all duplicates and changes nothing', async () => {
    const rows = batch([1, 2], 300);
    expect(await writeSampleBatch(db.pool, rows)).toEqual({
      stored: 600,
      duplicates: 0,
      conflicts: [],
      fast: true,
    });
    const before = await snapshot([1, 2]);
    // Same rows again, in another order: each named a duplicate by its ref.
    const again = await writeSampleBatch(db.pool, [...rows].reverse());
    expect({ ...again, duplicateRefs: sortedRefs(again.duplicateRefs) }).toEqual({
      stored: 0,
      duplicates: 600,
      duplicateRefs: rows.map((r) => r.ref),
      conflicts: [],
      fast: false,
    });
    // Without refs the outcome names none (and the counts stay).
    expect(
      await writeSampleBatch(
        db.pool,
        rows.map(({ ref: _, ...r }) => r),
      ),
    ).toEqual({
      stored: 0,
      duplicates: 600,
      conflicts: [],
      fast: false,
    });
    expect(await snapshot([1, 2])).toEqual(before);
  });

  it('corrected values are conflicts: stored values reported, nothing written', async () => {
    const rows = batch([3], 200);
    await writeSampleBatch(db.pool, rows);
    const before = await snapshot([3]);
    const again = rows.map((r) => ({ ...r }));
    again[10] = { ...again[10]!, value: again[10]!.value + 0.5 };
    again[20] = { ...again[20]!, quality: 0x54 }; // same value, another quality (OPC DA uncertain)
    // Bit for bit: 1 + 2^-52 is the next double after 1 (IEEE 754 binary64).
    again[30] = { ...again[30]!, value: again[30]!.value + 2 ** -52 * again[30]!.value };
    const out = await writeSampleBatch(db.pool, again);
    expect(out.stored).toBe(0);
    expect(out.duplicates).toBe(197);
    expect(out.fast).toBe(false);
    expect([...out.conflicts].sort(byRef)).toEqual(
      [10, 20, 30].map((i) => ({
        tagId: 3,
        time: rows[i]!.time,
        value: again[i]!.value,
        quality: again[i]!.quality,
        storedValue: rows[i]!.value,
        storedQuality: QUALITY_GOOD,
        ref: i,
      })),
    );
    expect(out.conflicts.find((c) => c.ref === 30)!.value).not.toBe(rows[30]!.value);
    expect(await snapshot([3])).toEqual(before);
  });

  it('negative zero is another value than zero (bit for bit)', async () => {
    await writeSampleBatch(db.pool, [{ tagId: 4, time: T0, value: 0, quality: QUALITY_GOOD }]);
    const out = await writeSampleBatch(db.pool, [{ tagId: 4, time: T0, value: -0, quality: QUALITY_GOOD }]);
    expect(out.duplicates).toBe(0);
    expect(out.conflicts).toHaveLength(1);
    expect(Object.is(out.conflicts[0]!.value, -0)).toBe(true);
    expect(Object.is(out.conflicts[0]!.storedValue, 0)).toBe(true);
  });

  it('a mixed batch: new rows stored (rollups merged), duplicates counted, conflicts refused', async () => {
    await writeSampleBatch(db.pool, batch([5], 120));
    // Seconds 60..239: 60 stored already (every 6th corrected), 120 new.
    const next = batch([5], 180, T0 + 60_000).map((r, i) =>
      i < 60 && i % 6 === 0 ? { ...r, value: -1 } : r,
    );
    const out = await writeSampleBatch(db.pool, next);
    expect(out).toMatchObject({ stored: 120, duplicates: 50, fast: false });
    // The 50 unchanged re-sent seconds, by ref (refs 0..59 were stored before, every 6th corrected).
    expect(sortedRefs(out.duplicateRefs)).toEqual(
      Array.from({ length: 60 }, (_, i) => i).filter((i) => i % 6 !== 0),
    );
    expect(out.conflicts.map((c) => c.ref).sort((a, b) => (a ?? 0) - (b ?? 0))).toEqual([
      0, 6, 12, 18, 24, 30, 36, 42, 48, 54,
    ]);
    expect(out.conflicts.every((c) => c.value === -1 && c.storedValue !== -1)).toBe(true);
    const r = await db.pool.query<{ n: number; refused: number; c: number; last: Date }>(
      `SELECT (SELECT count(*)::int FROM samples WHERE tag_id = 5) AS n,
              (SELECT count(*)::int FROM samples WHERE tag_id = 5 AND value = -1) AS refused,
              (SELECT sum(count)::int FROM samples_1m WHERE tag_id = 5) AS c,
              (SELECT time FROM tag_last WHERE tag_id = 5) AS last`,
    );
    expect(r.rows[0]).toEqual({ n: 240, refused: 0, c: 240, last: new Date(T0 + 239_000) });
  });

  it('repeated keys inside one batch: the first is the candidate (fast path, no stored rows)', async () => {
    const rows = batch([6], 10);
    const repeats: SampleRow[] = [
      { ...rows[3]!, ref: 100 }, // same value and quality: duplicate
      { ...rows[4]!, value: 99, ref: 101 }, // conflict with the candidate
      { ...rows[4]!, ref: 102 }, // duplicate of the candidate
    ];
    const out = await writeSampleBatch(db.pool, [...rows, ...repeats]);
    expect(out).toEqual({
      stored: 10,
      duplicates: 2,
      duplicateRefs: [100, 102],
      conflicts: [
        {
          tagId: 6,
          time: rows[4]!.time,
          value: 99,
          quality: QUALITY_GOOD,
          storedValue: rows[4]!.value,
          storedQuality: QUALITY_GOOD,
          ref: 101,
        },
      ],
      fast: true,
    });
    const v = await db.pool.query<{ value: number }>(
      'SELECT value FROM samples WHERE tag_id = 6 AND time = $1',
      [new Date(rows[4]!.time)],
    );
    expect(v.rows).toEqual([{ value: rows[4]!.value }]);
  });

  it('repeated keys of a refused candidate are judged against the stored value', async () => {
    const stored = batch([7], 5);
    await writeSampleBatch(db.pool, stored);
    const key = stored[2]!;
    const out = await writeSampleBatch(db.pool, [
      { ...key, value: 7, ref: 1 }, // candidate: conflict
      { ...key, value: 7, ref: 2 }, // same as the candidate, but the stored value is kept: conflict
      { ...key, ref: 3 }, // the stored value: duplicate
    ]);
    expect(out.stored).toBe(0);
    expect(out.duplicates).toBe(1);
    expect(out.duplicateRefs).toEqual([3]);
    expect([...out.conflicts].sort(byRef).map((c) => [c.ref, c.value, c.storedValue])).toEqual([
      [1, 7, key.value],
      [2, 7, key.value],
    ]);
  });

  it('SampleWriter counts outcomes and hands each batch its conflicts before flush resolves', async () => {
    const seen: WriteConflict[][] = [];
    const w = new SampleWriter(db.pool, {
      batchSize: 100,
      flushIntervalMs: 0,
      onConflicts: async (c) => {
        await new Promise((resolve) => setTimeout(resolve, 5));
        seen.push([...c]);
      },
    });
    const rows = batch([8], 250);
    await w.write(rows);
    await w.flush();
    expect(seen).toEqual([]);
    await w.write(rows.map((r, i) => (i % 50 === 0 ? { ...r, value: r.value + 1 } : r)));
    await w.flush();
    expect(seen.map((c) => c.length)).toEqual([2, 2, 1]);
    expect(seen.flat().map((c) => c.ref)).toEqual([0, 50, 100, 150, 200]);
    expect(w.stats).toMatchObject({
      rowsOffered: 500,
      rowsStored: 250,
      rowsDuplicate: 245,
      rowsConflicting: 5,
    });
    await w.close();
  });

  it('a failing onConflicts fails flush, and the next flush hands the same conflicts again', async () => {
    const seen: number[] = [];
    let fail = true;
    const w = new SampleWriter(db.pool, {
      flushIntervalMs: 0,
      onConflicts: (c) => {
        if (fail) throw new Error('quarantine file not writable');
        seen.push(...c.map((x) => x.ref ?? -1));
      },
    });
    const rows = batch([9], 20);
    await writeSampleBatch(db.pool, rows);
    await w.write([{ ...rows[5]!, value: 0 }]);
    await expect(w.flush()).rejects.toMatchObject({ code: 'STORE_WRITE_FAILED' });
    fail = false;
    await w.flush();
    expect(seen).toEqual([5]);
    expect(w.stats).toMatchObject({ rowsConflicting: 1, batches: 1 });
    await w.close();
  });
});

describe('literals sent with the COMMIT (tag_last, first rollup buckets)', () => {
  it('keep negative zero, denormals and 17-digit values exactly', async () => {
    // Values chosen for their bit patterns (IEEE 754 binary64): -0, the smallest denormal, 0.1 + 0.2.
    const values = [-0, 5e-324, 0.1 + 0.2];
    for (const [k, value] of values.entries())
      await writeSampleBatch(db.pool, [{ tagId: 80 + k, time: T0, value, quality: QUALITY_GOOD }]);
    const r = await db.pool.query<{ tag_id: number; l: string; m: string; s: string }>(
      `SELECT l.tag_id, encode(float8send(l.value), 'hex') AS l, encode(float8send(m.last_value), 'hex') AS m,
              encode(float8send(s.value), 'hex') AS s
         FROM tag_last l JOIN samples_1m m USING (tag_id) JOIN samples s USING (tag_id)
        WHERE l.tag_id BETWEEN 80 AND 82 ORDER BY l.tag_id`,
    );
    // float8send gives the big-endian bytes of the double.
    const hex = (v: number): string => {
      const b = Buffer.alloc(8);
      b.writeDoubleBE(v);
      return b.toString('hex');
    };
    expect(r.rows).toEqual(values.map((v, k) => ({ tag_id: 80 + k, l: hex(v), m: hex(v), s: hex(v) })));
  });
});

describe('batches in flight', () => {
  it('two batches at once on a pool of one connection: no deadlock, every row once, in order', async () => {
    const pool = new pg.Pool({ connectionString: db.url, max: 1 });
    try {
      const w = new SampleWriter(pool, { batchSize: 150, flushIntervalMs: 0, batchesInFlight: 2 });
      // Tag-major then time-major: batches with other tags and with the same tags.
      await w.write(batch([90, 91, 92], 200));
      await w.write(batch([90, 91, 92], 100, T0 + 200_000).sort((a, b) => a.time - b.time));
      await w.close();
      expect(w.stats).toMatchObject({
        rowsStored: 900,
        rowsDuplicate: 0,
        rowsConflicting: 0,
        stagedBatches: 0,
      });
    } finally {
      await pool.end();
    }
    const r = await db.pool.query<{ n: number; c: number; last: Date }>(
      `SELECT (SELECT count(*)::int FROM samples WHERE tag_id BETWEEN 90 AND 92) AS n,
              (SELECT sum(count)::int FROM samples_1h WHERE tag_id BETWEEN 90 AND 92) AS c,
              (SELECT max(time) FROM tag_last WHERE tag_id BETWEEN 90 AND 92) AS last`,
    );
    expect(r.rows[0]).toEqual({ n: 900, c: 900, last: new Date(T0 + 299_000) });
  });
});
