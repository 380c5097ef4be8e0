/**
 * rebuildRollups over a range packed into sample_blocks: the rollups are recomputed from the
 * packed history and the hot rows alike, equal bit for bit to what the writer kept. Data
 * are invented.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../test/support/database.js';
import { packSamples } from './blocks/pack.js';
import { rebuildRollups } from './index.js';
import { type SampleRow, writeSampleBatch } from './samples-writer.js';

const START = Date.UTC(2026, 5, 10, 5, 17, 3);
const END = Date.UTC(2026, 5, 14, 9, 0, 0);
const NOW = Date.UTC(2026, 5, 15, 12, 0, 0); // pack cutoff: 2026-06-13 00:00 UTC
const TAGS = [31, 32];

let db: TestDatabase;
beforeAll(async () => {
  db = await createTestDatabase();
});
afterAll(async () => {
  await db?.drop();
});

/** Irregular invented series (steps of 1 to 97 s), values with many significant bits. */
function series(tagId: number): SampleRow[] {
  const out: SampleRow[] = [];
  let v = 40 + tagId;
  let k = 0;
  for (let t = START; t < END; t += 1000 * (1 + ((k * 7919 + tagId) % 97))) {
    v += Math.sin(k * 0.37 + tagId) / 3;
    out.push({ tagId, time: t, value: v, quality: k % 41 === 0 ? 64 : 192 });
    k++;
  }
  return out;
}

/** Every rollup row of the tags, each double as its bits (float8send). */
async function rollups(): Promise<{ m: string[]; h: string[] }> {
  const q = (table: string) =>
    db.pool.query<{ r: string }>(
      `SELECT concat_ws(' ', tag_id, bucket, float8send(min), float8send(max), float8send(sum), count,
              float8send(last_value), last_time) AS r
         FROM ${table} WHERE tag_id = ANY($1) ORDER BY tag_id, bucket`,
      [TAGS],
    );
  return { m: (await q('samples_1m')).rows.map((x) => x.r), h: (await q('samples_1h')).rows.map((x) => x.r) };
}

describe('rebuildRollups over packed history', () => {
  it('recomputes samples_1m and samples_1h from blocks and hot rows, bit for bit as the writer kept them', async () => {
    // One batch per tag, so every bucket's sum is one sequential sum, as a rebuild makes it.
    for (const tag of TAGS) expect((await writeSampleBatch(db.pool, series(tag))).fast).toBe(true);
    const before = await rollups();
    expect(before.m.length).toBeGreaterThan(5000);
    const pack = await packSamples(db.pool, { nowMs: NOW });
    expect(pack.blocksWritten).toBeGreaterThan(0);
    const hot = await db.pool.query<{ n: number }>(
      'SELECT count(*)::int AS n FROM samples WHERE tag_id = ANY($1)',
      [TAGS],
    );
    expect(hot.rows[0]!.n).toBeGreaterThan(0); // the last two days stay hot
    // Over the whole range, tags named, and again with the tags found by the rebuild itself.
    await rebuildRollups(db.pool, { tagIds: TAGS, from: START, to: END });
    expect(await rollups()).toEqual(before);
    await rebuildRollups(db.pool, { from: START, to: END });
    expect(await rollups()).toEqual(before);
  });
});
