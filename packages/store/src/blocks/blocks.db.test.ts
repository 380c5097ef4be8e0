/**
 * Compressed blocks on the real PostgreSQL (or the embedded one): the pack, readSeries equal
 * bit for bit to the uncompressed table for random ranges (some starting or ending inside a
 * block), late and repeated samples merged exactly once, retention per tag and per site.
 * Data are invented.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../../test/support/database.js';
import { ensurePartitions } from '../partitions.js';
import { applyRawRetention } from '../retention.js';
import { aggregateSortedBatch } from '../rollups.js';
import { type SampleInput, type SampleRow, SampleWriter, writeSampleBatch } from '../samples-writer.js';
import type { SeriesColumns } from './columns.js';
import { packSamples } from './pack.js';
import { readSeries } from './read.js';
import { seriesRows } from './rollup-source.js';

const DAY = 86_400_000;
// Spans February (a whole partition to truncate) into March (a partial one to DELETE from).
const START = Date.UTC(2026, 1, 25, 7, 13, 0);
const END = Date.UTC(2026, 2, 4, 0, 0, 0);
const NOW = Date.UTC(2026, 2, 5, 12, 0, 0); // cutoff: 2026-03-03 00:00 UTC
const TAGS = [11, 12, 13];

/** Deterministic pseudo-random numbers (a 32-bit LCG, Numerical Recipes constants; common practice). */
function lcg(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return s / 2 ** 32;
  };
}

/** Irregular series: steps of 1 to 120 s, some repeated values, -0, tiny values, qualities changing. */
function series(tagId: number, rand: () => number): SampleInput[] {
  const out: SampleInput[] = [];
  let v = 20 + tagId;
  for (let t = START; t < END; t += 1000 * (1 + Math.floor(rand() * 120))) {
    const r = rand();
    if (r < 0.2)
      v = v + 0; // repeated value
    else if (r < 0.21) v = -0;
    else if (r < 0.22)
      v = 5e-324; // a denormal
    else v = Math.round((v + (rand() - 0.5)) * 1e4) / 1e4;
    out.push({ tagId, time: t, value: v, quality: rand() < 0.05 ? 64 : 192 });
  }
  return out;
}

/** The uncompressed reference: the rows of `samples` in [from, to) by plain SQL. */
async function reference(db: TestDatabase, tagId: number, from: number, to: number): Promise<SeriesColumns> {
  const r = await db.pool.query<{ t: number; v: number; q: number }>(
    `SELECT (extract(epoch FROM time) * 1000)::float8 AS t, value AS v, quality AS q FROM samples
      WHERE tag_id = $1 AND time >= to_timestamp($2::float8 / 1000) AND time < to_timestamp($3::float8 / 1000) ORDER BY time`,
    [tagId, from, to],
  );
  return {
    times: Float64Array.from(r.rows, (x) => x.t),
    values: Float64Array.from(r.rows, (x) => x.v),
    qualities: Int16Array.from(r.rows, (x) => x.q),
  };
}

/** Bytes of the three columns, so -0 against 0 or a changed bit fails the comparison. */
function bits(s: SeriesColumns | undefined): number[][] {
  if (s === undefined) return [[], [], []];
  return [s.times, s.values, s.qualities].map((a) => [
    ...new Uint8Array(a.buffer, a.byteOffset, a.byteLength),
  ]);
}

describe('sample blocks', () => {
  let db: TestDatabase;
  const ranges: [number, number][] = [];
  const before = new Map<string, SeriesColumns>();

  beforeAll(async () => {
    db = await createTestDatabase();
    await ensurePartitions(db.pool, 'samples', START, END);
    const rand = lcg(16);
    const writer = new SampleWriter(db.pool, { batchSize: 20_000, flushIntervalMs: 0 });
    for (const tag of TAGS) await writer.write(series(tag, rand));
    await writer.close();
    // Random ranges, and ranges starting or ending inside a day's block (mid-day bounds).
    for (let i = 0; i < 12; i++) {
      const a = START - DAY + Math.floor(rand() * (END - START + 2 * DAY));
      const b = a + Math.floor(rand() * 4 * DAY);
      ranges.push([a, b]);
    }
    ranges.push([Date.UTC(2026, 1, 27, 13, 7, 1), Date.UTC(2026, 1, 27, 13, 9, 59)]); // inside one block
    ranges.push([Date.UTC(2026, 1, 26, 23, 0), Date.UTC(2026, 2, 2, 5, 0)]); // across the month, hot and packed
    ranges.push([Number.NEGATIVE_INFINITY, Number.POSITIVE_INFINITY]);
    for (const tag of TAGS)
      for (const [a, b] of ranges) before.set(`${tag} ${a} ${b}`, await reference(db, tag, a, b));
  }, 120_000);

  afterAll(async () => {
    await db?.drop();
  });

  it('reads the hot table as the plain SQL does, before any pack', async () => {
    for (const [a, b] of ranges) {
      const got = await readSeries(db.pool, TAGS, a, b);
      for (const tag of TAGS) expect(bits(got.get(tag))).toEqual(bits(before.get(`${tag} ${a} ${b}`)));
    }
  });

  it('packs whole days older than the age: February truncated, March deleted up to the cutoff', async () => {
    const report = await packSamples(db.pool, { nowMs: NOW });
    expect(report.partitionsTruncated).toEqual(['samples_p2026_02']);
    const left = await db.pool.query<{ n: number; first: Date }>(
      'SELECT count(*)::int AS n, min(time) AS first FROM samples',
    );
    // Cutoff: the UTC day two days before NOW (common practice for the default age, no source).
    expect(left.rows[0]?.first.getTime()).toBeGreaterThanOrEqual(Date.UTC(2026, 2, 3));
    const blocks = await db.pool.query<{ n: number; per_day: number; stored: number }>(
      `SELECT count(*)::int AS n, max(c)::int AS per_day, (SELECT sum(sample_count)::int FROM sample_blocks) AS stored
         FROM (SELECT tag_id, date_trunc('day', first_time AT TIME ZONE 'UTC'), count(*) AS c FROM sample_blocks GROUP BY 1, 2) d`,
    );
    expect(blocks.rows[0]?.per_day).toBe(1); // one block per tag and UTC day
    expect(blocks.rows[0]?.stored).toBe(report.rowsRemoved);
    expect(report.rowsRead).toBe(report.rowsRemoved);
    const total = before.get(`11 ${Number.NEGATIVE_INFINITY} ${Number.POSITIVE_INFINITY}`)!.times.length;
    expect(total).toBeGreaterThan(0);
    // A second run finds nothing more to pack.
    expect((await packSamples(db.pool, { nowMs: NOW })).rowsRead).toBe(0);
  });

  it('reads packed and hot samples equal to the uncompressed table, bit for bit, for every range', async () => {
    for (const [a, b] of ranges) {
      const got = await readSeries(db.pool, TAGS, a, b);
      for (const tag of TAGS) expect(bits(got.get(tag))).toEqual(bits(before.get(`${tag} ${a} ${b}`)));
    }
  });

  it('recomputes the rollups the writer kept from packed and hot samples alike (for rebuildRollups)', async () => {
    const rows = await seriesRows(db.pool, [13], Number.NEGATIVE_INFINITY, Number.POSITIVE_INFINITY);
    const minutes = aggregateSortedBatch(rows).filter((r) => !r.hourly);
    const stored = await db.pool.query<{
      b: Date;
      min: number;
      max: number;
      count: number;
      last_value: number;
    }>('SELECT bucket AS b, min, max, count, last_value FROM samples_1m WHERE tag_id = 13 ORDER BY bucket');
    expect(minutes.length).toBeGreaterThan(1000);
    // min, max, count and last exact (the same samples; common practice, no source).
    expect(minutes.map((m) => [m.bucket, m.min, m.max, m.count, m.lastValue])).toEqual(
      stored.rows.map((r) => [r.b.getTime(), r.min, r.max, r.count, r.last_value]),
    );
  });

  it('merges late samples into their block exactly once, keeping the first value of a key', async () => {
    const all = (await readSeries(db.pool, [12], Number.NEGATIVE_INFINITY, Number.POSITIVE_INFINITY)).get(
      12,
    )!;
    const k = 100; // a packed key
    const t0 = all.times[k] as number;
    const late = [
      { tagId: 12, time: t0 + 1, value: 1.5, quality: 192 }, // new, inside the block
      { tagId: 12, time: t0, value: all.values[k] as number, quality: all.qualities[k] as number }, // duplicate
      { tagId: 12, time: all.times[k + 1] as number, value: -7, quality: 192 }, // conflict
    ];
    const first = await writeSampleBatch(db.pool, late);
    expect(first.stored).toBe(1);
    const again = await writeSampleBatch(db.pool, late);
    expect(again.stored).toBe(0);
    const after = (await readSeries(db.pool, [12], Number.NEGATIVE_INFINITY, Number.POSITIVE_INFINITY)).get(
      12,
    )!;
    expect(after.times.length).toBe(all.times.length + 1);
    expect(after.times[k + 1]).toBe(t0 + 1);
    expect(after.values[k + 1]).toBe(1.5);
    expect(after.values[k + 2]).toBe(all.values[k + 1]); // the first stored value is kept
    const hot = await db.pool.query<{ n: number }>(
      'SELECT count(*)::int AS n FROM samples WHERE tag_id = 12 AND time < $1',
      [new Date(Date.UTC(2026, 2, 3))],
    );
    expect(hot.rows[0]?.n).toBe(0); // merged into the block, not written hot
    // The rollups count the merged sample once: their total equals the series length.
    const h = await db.pool.query<{ n: number }>(
      'SELECT sum(count)::int AS n FROM samples_1h WHERE tag_id = 12',
    );
    expect(h.rows[0]?.n).toBe(after.times.length);
  });

  it('names the duplicates of packed and hot rows and of repeats in the batch by their refs', async () => {
    const all = (await readSeries(db.pool, [11], Number.NEGATIVE_INFINITY, Number.POSITIVE_INFINITY)).get(
      11,
    )!;
    const sample = (k: number, ref: number): SampleRow => ({
      tagId: 11,
      time: all.times[k] as number,
      value: all.values[k] as number,
      quality: all.qualities[k] as number,
      ref,
    });
    const last = all.times.length - 1; // hot: after the pack cutoff
    const out = await writeSampleBatch(db.pool, [
      sample(50, 10), // packed, stored before: duplicate
      { ...sample(51, 11), value: -3 }, // packed, another value: conflict
      { ...sample(52, 12), time: (all.times[52] as number) + 1 }, // packed range, new
      sample(50, 13), // repeat of ref 10 in the batch: duplicate
      sample(last, 14), // hot, stored before: duplicate
    ]);
    expect(out).toMatchObject({ stored: 1, duplicates: 3, fast: false });
    expect(out.conflicts.map((c) => c.ref)).toEqual([11]);
    expect([...(out.duplicateRefs ?? [])].sort((a, b) => a - b)).toEqual([10, 13, 14]);
  });

  it('drops blocks older than N days per tag and per site, and leaves the others', async () => {
    const site = await db.pool.query<{ id: number }>(
      `INSERT INTO sites (slug, name, time_zone, spec) VALUES ('r', 'Retention works (invented)', 'UTC', '{}') RETURNING id`,
    );
    const blocksOf = async (tag: number): Promise<number> =>
      (
        await db.pool.query<{ n: number }>('SELECT count(*)::int AS n FROM sample_blocks WHERE tag_id = $1', [
          tag,
        ])
      ).rows[0]!.n;
    const before11 = await blocksOf(11);
    const before13 = await blocksOf(13);
    // Tag 11: keep 5 days as of NOW, so blocks ending before 2026-02-28 12:00 go.
    const r = await applyRawRetention(db.pool, { tags: new Map([[11, 5]]) }, new Date(NOW));
    expect(r.blocksDropped).toBeGreaterThan(0);
    expect(await blocksOf(11)).toBe(before11 - r.blocksDropped);
    const oldest = await db.pool.query<{ t: Date }>(
      'SELECT min(last_time) AS t FROM sample_blocks WHERE tag_id = 11',
    );
    expect(oldest.rows[0]!.t.getTime()).toBeGreaterThanOrEqual(NOW - 5 * DAY);
    expect(await blocksOf(13)).toBe(before13);
    // A site's tags: none here yet, so nothing is dropped; then tag 13 moved to that site... by its own entry.
    const bySite = await applyRawRetention(
      db.pool,
      { sites: new Map([[site.rows[0]!.id, 1]]) },
      new Date(NOW),
    );
    expect(bySite.tags).toBe(0);
    await expect(applyRawRetention(db.pool, { tags: new Map([[13, 0]]) })).rejects.toMatchObject({
      code: 'STORE_BAD_RETENTION',
    });
  });

  it('stores every key exactly once while a pack runs beside a writer re-sending and adding late samples', async () => {
    const n0 = Date.UTC(2025, 10, 10);
    await ensurePartitions(db.pool, 'samples', n0, n0 + 3 * DAY);
    const original: SampleRow[] = [];
    const late: SampleRow[] = [];
    for (const tagId of [21, 22])
      for (let t = n0; t < n0 + 3 * DAY; t += 10_000) {
        original.push({ tagId, time: t, value: t / 1e9, quality: 192 });
        if (t % 70_000 === 0) late.push({ tagId, time: t + 5000, value: -1, quality: 192 });
      }
    await writeSampleBatch(db.pool, original);
    const chunks: SampleRow[][] = [];
    for (let i = 0; i < original.length; i += 5000) chunks.push(original.slice(i, i + 5000));
    for (let i = 0; i < late.length; i += 500) chunks.push(late.slice(i, i + 500));
    const writing = (async () => {
      let stored = 0;
      for (const c of chunks) stored += (await writeSampleBatch(db.pool, c)).stored;
      return stored;
    })();
    const [stored] = await Promise.all([writing, packSamples(db.pool, { nowMs: Date.UTC(2025, 11, 10) })]);
    await packSamples(db.pool, { nowMs: Date.UTC(2025, 11, 10) });
    expect(late.length).toBeGreaterThan(100);
    expect(stored).toBe(late.length);
    const got = await readSeries(db.pool, [21, 22], n0 - DAY, n0 + 4 * DAY);
    let total = 0;
    for (const s of got.values()) {
      total += s.times.length;
      for (let i = 1; i < s.times.length; i++) expect(s.times[i]).toBeGreaterThan(s.times[i - 1]!);
    }
    expect(total).toBe(original.length + late.length);
    const hot = await db.pool.query<{ n: number }>(
      'SELECT count(*)::int AS n FROM samples WHERE tag_id IN (21, 22)',
    );
    expect(hot.rows[0]?.n).toBe(0);
  });
});
