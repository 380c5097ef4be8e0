import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../test/support/database.js';
import { ensureCurrentPartitions, listPartitions } from './partitions.js';
import { QUALITY_GOOD } from './quality.js';
import { applyRetention } from './retention.js';
import { rebuildRollups } from './rollup-rebuild.js';
import { type SampleInput, SampleWriter, writeSampleBatch } from './samples-writer.js';
import { readTrend } from './trends.js';

let db: TestDatabase;
beforeAll(async () => {
  db = await createTestDatabase();
});
afterAll(async () => {
  await db.drop();
});

const T0 = Date.UTC(2026, 0, 15, 10, 0, 0);

/** Invented test data: a smooth signal per tag, one sample every `stepMs`. */
function samples(tagId: number, n: number, stepMs = 1000, start = T0): SampleInput[] {
  return Array.from({ length: n }, (_, i) => ({
    tagId,
    time: start + i * stepMs,
    value: 100 + 10 * Math.sin(i / 50) + tagId,
    quality: QUALITY_GOOD,
  }));
}

/**
 * Rollup buckets of the given tags that differ from aggregates recomputed from raw samples
 * (min, max, count, last value and time exact; sum to float rounding, common practice, no
 * source), for one rollup table; plus how many buckets were compared.
 */
async function rollupMismatches(
  table: 'samples_1m' | 'samples_1h',
  tagIds: number[],
): Promise<{ bad: number; n: number }> {
  const unit = table === 'samples_1m' ? 'minute' : 'hour';
  const r = await db.pool.query<{ bad: number; n: number }>(
    `WITH raw AS (
       SELECT tag_id, date_trunc('${unit}', time) AS bucket, min(value) AS lo, max(value) AS hi, sum(value) AS s,
              count(*)::int AS c, (array_agg(value ORDER BY time DESC))[1] AS lv, max(time) AS lt
         FROM samples WHERE tag_id = ANY($1) GROUP BY 1, 2)
     SELECT count(*) FILTER (WHERE m.bucket IS NULL OR raw.bucket IS NULL OR m.min <> raw.lo OR m.max <> raw.hi
                               OR m.count <> raw.c OR m.last_value <> raw.lv OR m.last_time <> raw.lt
                               OR abs(m.sum - raw.s) > 1e-9 * greatest(1, abs(raw.s)))::int AS bad,
            count(*)::int AS n
       FROM raw FULL JOIN (SELECT * FROM ${table} WHERE tag_id = ANY($1)) m USING (tag_id, bucket)`,
    [tagIds],
  );
  return r.rows[0]!;
}

/** The test samples with numeric times, as writeSampleBatch takes them. */
function asRows(input: SampleInput[]): { tagId: number; time: number; value: number; quality: number }[] {
  return input.map((x) => ({ ...x, time: typeof x.time === 'number' ? x.time : x.time.getTime() }));
}

async function count(sql: string, params: unknown[] = []): Promise<number> {
  const r = await db.pool.query<{ n: number }>(sql, params);
  return r.rows[0]!.n;
}

describe('SampleWriter', () => {
  it('stores a batch, and a re-sent batch changes nothing (samples, rollups, tag_last)', async () => {
    const w = new SampleWriter(db.pool, { batchSize: 1000, flushIntervalMs: 0 });
    const batch = samples(1, 2500);
    await w.write(batch);
    await w.flush();
    expect(w.stats.rowsStored).toBe(2500);
    expect(w.stats.fastBatches).toBe(3);
    const snapshot = async (): Promise<unknown> =>
      (
        await db.pool.query(
          `SELECT (SELECT md5(string_agg(tag_id || ' ' || time || ' ' || value || ' ' || quality, ',' ORDER BY tag_id, time)) FROM samples WHERE tag_id = 1) AS s,
                  (SELECT md5(string_agg(m::text, ',' ORDER BY bucket)) FROM samples_1m m WHERE tag_id = 1) AS m,
                  (SELECT md5(string_agg(h::text, ',' ORDER BY bucket)) FROM samples_1h h WHERE tag_id = 1) AS h,
                  (SELECT l::text FROM tag_last l WHERE tag_id = 1) AS l`,
        )
      ).rows[0];
    const before = await snapshot();
    // The same rows again, shuffled, with different values (a re-send never overwrites).
    const again = [...batch].reverse().map((s) => ({ ...s, value: s.value + 1 }));
    await w.write(again);
    await w.close();
    expect(w.stats.rowsStored).toBe(2500);
    expect(w.stats.rowsConflicting).toBe(2500);
    expect(w.stats.stagedBatches).toBe(3);
    expect(await snapshot()).toEqual(before);
    expect(await count('SELECT count(*)::int AS n FROM samples WHERE tag_id = 1')).toBe(2500);
  });

  it('overlapping batches store only their new rows', async () => {
    const w = new SampleWriter(db.pool, { flushIntervalMs: 0 });
    await w.write(samples(2, 100));
    await w.flush();
    await w.write(samples(2, 150));
    await w.close();
    expect(w.stats.rowsStored).toBe(150);
    expect(await count('SELECT count(*)::int AS n FROM samples WHERE tag_id = 2')).toBe(150);
  });

  it('concurrent writers sending overlapping data store each key once, rollups consistent', async () => {
    const writers = Array.from(
      { length: 4 },
      () => new SampleWriter(db.pool, { batchSize: 700, flushIntervalMs: 0 }),
    );
    // Each writer sends tags 10..12 over the same hour, partly overlapping its neighbours.
    await Promise.all(
      writers.map(async (w, k) => {
        for (const tag of [10, 11, 12]) await w.write(samples(tag, 2000, 1000, T0 + k * 500_000));
        await w.close();
      }),
    );
    const stored = writers.reduce((a, w) => a + w.stats.rowsStored, 0);
    const distinct = await count('SELECT count(*)::int AS n FROM samples WHERE tag_id IN (10, 11, 12)');
    // 4 windows of 2000 s starting every 500 s cover 3500 distinct seconds per tag.
    expect(distinct).toBe(3 * 3500);
    expect(stored).toBe(distinct);
    const mismatch = await count(
      `SELECT count(*)::int AS n FROM samples_1m m
         FULL JOIN (SELECT tag_id, date_trunc('minute', time) AS bucket, count(*)::int AS c, min(value) AS lo, max(value) AS hi
                      FROM samples WHERE tag_id IN (10, 11, 12) GROUP BY 1, 2) r USING (tag_id, bucket)
        WHERE (m.tag_id IN (10, 11, 12) OR r.tag_id IS NOT NULL)
          AND (m.count IS DISTINCT FROM r.c OR m.min IS DISTINCT FROM r.lo OR m.max IS DISTINCT FROM r.hi)`,
    );
    expect(mismatch).toBe(0);
  });

  it('rollups equal aggregates computed from raw data (1 min and 1 h)', async () => {
    const w = new SampleWriter(db.pool, { batchSize: 997, flushIntervalMs: 0 });
    // Irregular times (0.7 s to 2.9 s apart) across several hours, in uneven batches.
    const rows: SampleInput[] = [];
    let t = Date.UTC(2026, 1, 27, 22, 30, 0);
    for (let i = 0; i < 20_000; i++) {
      t += 700 + ((i * 7919) % 2200);
      rows.push({ tagId: 20, time: t, value: Math.cos(i / 37) * 5 + (i % 13), quality: QUALITY_GOOD });
    }
    for (let i = 0; i < rows.length; i += 3001) await w.write(rows.slice(i, i + 3001));
    await w.close();
    for (const [table, unit] of [
      ['samples_1m', 'minute'],
      ['samples_1h', 'hour'],
    ] as const) {
      const r = await db.pool.query<{ bad: number; n: number; maxsumerr: number }>(
        `WITH raw AS (
           SELECT date_trunc('${unit}', time) AS bucket, min(value) AS lo, max(value) AS hi, sum(value) AS s, count(*)::int AS c,
                  (array_agg(value ORDER BY time DESC))[1] AS lv, max(time) AS lt
             FROM samples WHERE tag_id = 20 GROUP BY 1)
         SELECT count(*) FILTER (WHERE m.bucket IS NULL OR raw.bucket IS NULL OR m.min <> raw.lo OR m.max <> raw.hi
                                   OR m.count <> raw.c OR m.last_value <> raw.lv OR m.last_time <> raw.lt)::int AS bad,
                count(*)::int AS n, max(abs(m.sum - raw.s))::float8 AS maxsumerr
           FROM raw FULL JOIN (SELECT * FROM ${table} WHERE tag_id = 20) m USING (bucket)`,
      );
      const row = r.rows[0]!;
      expect(row.bad).toBe(0);
      expect(row.n).toBeGreaterThan(unit === 'hour' ? 10 : 600);
      // sums of sums differ from one sum only by float rounding; common practice, no source.
      expect(row.maxsumerr).toBeLessThan(1e-9);
    }
  });

  it('rejects a bad sample with its index and values, and stores nothing of that call', async () => {
    const w = new SampleWriter(db.pool, { flushIntervalMs: 0 });
    const bad = [
      ...samples(30, 3),
      { tagId: 30, time: T0 + 10_000, value: Number.NaN, quality: QUALITY_GOOD },
    ];
    await expect(w.write(bad)).rejects.toMatchObject({ code: 'STORE_BAD_SAMPLE', details: { index: 3 } });
    await w.close();
    expect(await count('SELECT count(*)::int AS n FROM samples WHERE tag_id = 30')).toBe(0);
    await expect(w.write(samples(30, 1))).rejects.toMatchObject({ code: 'STORE_WRITER_CLOSED' });
  });

  it('applies per-tag swinging-door compression within its bound', async () => {
    const w = new SampleWriter(db.pool, {
      flushIntervalMs: 0,
      compression: new Map([[40, { method: 'swinging-door', deviation: 0.05 }]]),
    });
    const input = samples(40, 3000);
    await w.write(input);
    await w.close();
    const stored = await db.pool.query<{ t: Date; v: number }>(
      'SELECT time AS t, value AS v FROM samples WHERE tag_id = 40 ORDER BY time',
    );
    expect(stored.rows.length).toBeLessThan(input.length / 3);
    const kept = stored.rows.map((r) => ({ time: r.t.getTime(), value: r.v }));
    let k = 0;
    let worst = 0;
    for (const p of input) {
      const time = p.time as number;
      while (k + 2 < kept.length && kept[k + 1]!.time <= time) k++;
      const a = kept[k]!;
      const b = kept[k + 1]!;
      const v = a.value + ((b.value - a.value) * (time - a.time)) / (b.time - a.time);
      worst = Math.max(worst, Math.abs(v - p.value));
    }
    // Bound of the method by construction; common practice, no source.
    expect(worst).toBeLessThanOrEqual(0.05 * (1 + 1e-9));
  });
});

describe('rollups kept in step with raw samples', () => {
  it('a later bucket already stored (written around the writer) sends the batch to the merge path', async () => {
    const start = Date.UTC(2026, 3, 1, 8, 0, 0);
    await writeSampleBatch(db.pool, asRows(samples(70, 300, 1000, start)));
    // Around the writer: one sample 20 minutes on, with its rollup rows, tag_last untouched.
    const late = start + 20 * 60_000 + 500;
    await db.pool.query(`INSERT INTO samples VALUES (70, $1, 42.5, 192)`, [new Date(late).toISOString()]);
    await rebuildRollups(db.pool, { tagIds: [70], from: late, to: late + 1 });
    // The next batch is newer than tag_last, so its samples go in by COPY; its minute 20
    // bucket exists already, so its rollups must be merged, not copied.
    const r = await writeSampleBatch(db.pool, asRows(samples(70, 1800, 1000, start + 300_000)));
    expect(r).toEqual({ stored: 1800, duplicates: 0, conflicts: [], fast: true });
    // Minutes 0-4 from the first batch, 5-34 from the second (the late sample is in minute 20).
    expect(await rollupMismatches('samples_1m', [70])).toMatchObject({ bad: 0, n: 35 });
    expect(await rollupMismatches('samples_1h', [70])).toMatchObject({ bad: 0, n: 1 });
  });

  it('the staging path merges only the rows that were new', async () => {
    const start = Date.UTC(2026, 3, 2, 8, 0, 0);
    await writeSampleBatch(db.pool, asRows(samples(71, 100, 1000, start)));
    // Overlaps the first 100 s with other values (never stored), adds 200 s more, unsorted.
    const again = asRows(samples(71, 300, 1000, start))
      .map((x) => ({ ...x, value: x.value + 7 }))
      .reverse();
    const r = await writeSampleBatch(db.pool, again);
    expect(r).toMatchObject({ stored: 200, duplicates: 0, fast: false });
    expect(r.conflicts).toHaveLength(100);
    expect(await rollupMismatches('samples_1m', [71])).toMatchObject({ bad: 0, n: 5 });
    expect(await rollupMismatches('samples_1h', [71])).toMatchObject({ bad: 0 });
  });

  it('rebuildRollups repairs damaged buckets and removes buckets without samples', async () => {
    const start = Date.UTC(2026, 3, 3, 22, 30, 0);
    const w = new SampleWriter(db.pool, { batchSize: 900, flushIntervalMs: 0 });
    await w.write([...samples(72, 4000, 1500, start), ...samples(73, 4000, 1500, start)]);
    await w.close();
    await db.pool.query('UPDATE samples_1m SET max = -1, count = 1 WHERE tag_id IN (72, 73)');
    await db.pool.query('UPDATE samples_1h SET sum = 0 WHERE tag_id = 73');
    await db.pool.query(
      `INSERT INTO samples_1m VALUES (72, '2026-04-05T00:00:00Z', 1, 1, 1, 1, 1, '2026-04-05T00:00:00Z')`,
    );
    expect((await rollupMismatches('samples_1m', [72, 73])).bad).toBeGreaterThan(100);
    const one = await rebuildRollups(db.pool, { tagIds: [72], from: start, to: Date.UTC(2026, 3, 6) });
    expect(one.tags).toBe(1);
    expect(await rollupMismatches('samples_1m', [72])).toMatchObject({ bad: 0 });
    expect((await rollupMismatches('samples_1m', [73])).bad).toBeGreaterThan(0);
    // No tag list: every tag with samples or rollups in the range.
    await rebuildRollups(db.pool, { from: new Date(start), to: new Date(Date.UTC(2026, 3, 6)) });
    for (const table of ['samples_1m', 'samples_1h'] as const) {
      const m = await rollupMismatches(table, [72, 73]);
      expect(m.bad).toBe(0);
      expect(m.n).toBeGreaterThan(table === 'samples_1m' ? 150 : 3);
    }
    await expect(rebuildRollups(db.pool, { from: start + 1000, to: start })).rejects.toMatchObject({
      code: 'STORE_TIME_RANGE',
    });
  });

  it('stores instants before 2000 and before 1970 exactly (binary COPY timestamps)', async () => {
    const times = [Date.UTC(1999, 11, 31, 23, 59, 59, 999), Date.UTC(1969, 6, 20, 20, 17, 40, 1)];
    for (const [i, t] of times.entries()) {
      // No rollups: their partitions for 1969 and 1999 would be dropped by the retention test below.
      await writeSampleBatch(db.pool, [{ tagId: 74, time: t, value: -0.125 * (i + 1), quality: 192 }], {
        rollups: false,
      });
    }
    const r = await db.pool.query<{ t: Date; v: number; q: number }>(
      'SELECT time AS t, value AS v, quality AS q FROM samples WHERE tag_id = 74 ORDER BY time DESC',
    );
    expect(r.rows.map((x) => [x.t.getTime(), x.v, x.q])).toEqual([
      [times[0], -0.125, 192],
      [times[1], -0.25, 192],
    ]);
  });
});

describe('trends', () => {
  it('downsampling keeps a single-sample spike at every zoom, raw and rollup', async () => {
    const w = new SampleWriter(db.pool, { batchSize: 5000, flushIntervalMs: 0 });
    const start = Date.UTC(2026, 2, 1);
    const rows = samples(50, (3 * 86_400) / 10, 10_000, start); // 3 days of 10 s data
    const spikeAt = 1_234;
    rows[spikeAt] = { ...rows[spikeAt]!, value: 1e4 };
    await w.write(rows);
    await w.close();
    const from = new Date(start);
    const to = new Date(start + 3 * 86_400_000);
    const sources = new Set<string>();
    // 25,920 rows: under the default raw budget, so 200 buckets read raw samples; a budget
    // of 1,000 rows sends the same request to the 1-minute rollup.
    for (const [buckets, rawRowLimit, source] of [
      [10, undefined, 'rollup_1h'],
      [200, undefined, 'raw'],
      [200, 1000, 'rollup_1m'],
      // 52 s buckets: finer than the 1-minute rollup, so raw whatever the budget.
      [5000, 1000, 'raw'],
    ] as const) {
      const trend = await readTrend(db.pool, {
        series: { kind: 'tag', tagId: 50 },
        from,
        to,
        buckets,
        ...(rawRowLimit === undefined ? {} : { rawRowLimit }),
      });
      sources.add(trend.source);
      expect(trend.source).toBe(source);
      expect(Math.max(...trend.buckets.map((b) => b.max))).toBe(1e4);
      expect(trend.buckets.reduce((a, b) => a + b.count, 0)).toBe(rows.length);
      // "last" of every bucket is the value of its latest sample (found without a sort).
      for (const b of trend.buckets) {
        const i = (b.lastTime.getTime() - start) / 10_000;
        expect(b.last).toBe(rows[i]!.value);
      }
    }
    expect([...sources].sort()).toEqual(['raw', 'rollup_1h', 'rollup_1m']);
  });

  it('raw buckets give min, max, mean, last and count of their samples', async () => {
    const start = Date.UTC(2026, 2, 10);
    const w = new SampleWriter(db.pool, { flushIntervalMs: 0 });
    await w.write(
      [1, 5, 3, 9, 2, 4].map((v, i) => ({
        tagId: 51,
        time: start + i * 10_000,
        value: v,
        quality: QUALITY_GOOD,
      })),
    );
    await w.close();
    const trend = await readTrend(db.pool, {
      series: { kind: 'tag', tagId: 51 },
      from: new Date(start),
      to: new Date(start + 60_000),
      buckets: 2,
    });
    // Hand-computed from the six values above; common practice, no source.
    expect(trend.source).toBe('raw');
    expect(
      trend.buckets.map(({ index, min, max, mean, last, count }) => ({ index, min, max, mean, last, count })),
    ).toEqual([
      { index: 0, min: 1, max: 5, mean: 3, last: 3, count: 3 },
      { index: 1, min: 2, max: 9, mean: 5, last: 4, count: 3 },
    ]);
  });
});

describe('quality convention', () => {
  it('compresses only good samples, stores kept points as good and others as received', async () => {
    const w = new SampleWriter(db.pool, {
      flushIntervalMs: 0,
      compression: new Map([[42, { method: 'deadband', deviation: 100 }]]),
    });
    // OPC DA codes: 0xD8 good (local override), 0x54 uncertain, 0x1C bad (out of service).
    const input = samples(42, 50).map((x, i) => ({
      ...x,
      quality: i === 10 ? 0x54 : i === 20 ? 0x1c : 0xd8,
    }));
    await w.write(input);
    await w.close();
    const r = await db.pool.query<{ t: Date; q: number }>(
      'SELECT time AS t, quality AS q FROM samples WHERE tag_id = 42 ORDER BY time',
    );
    const t0 = input[0]!.time as number;
    // Deadband 100 keeps the first and (on close) the last good point, plus both non-good ones.
    expect(r.rows.map((x) => [(x.t.getTime() - t0) / 1000, x.q])).toEqual([
      [0, 192],
      [10, 0x54],
      [20, 0x1c],
      [49, 192],
    ]);
  });

  it('the samples table defaults quality to good (192)', async () => {
    await db.pool.query(`INSERT INTO samples (tag_id, time, value) VALUES (43, '2026-01-20T00:00:00Z', 1)`);
    expect(await count('SELECT quality::int AS n FROM samples WHERE tag_id = 43')).toBe(192);
  });
});

describe('partitions and retention', () => {
  it('creates partitions ahead of time for every time-series table', async () => {
    const now = new Date(Date.UTC(2031, 4, 20));
    await ensureCurrentPartitions(db.pool, now, 2);
    const names = (await listPartitions(db.pool, 'samples')).map((p) => p.name);
    expect(names).toEqual(
      expect.arrayContaining(['samples_p2031_05', 'samples_p2031_06', 'samples_p2031_07']),
    );
    expect((await listPartitions(db.pool, 'results')).map((p) => p.name)).toContain('results_p2031_07');
    expect((await listPartitions(db.pool, 'samples_1h')).map((p) => p.name)).toContain('samples_1h_p2031');
    const may = (await listPartitions(db.pool, 'samples')).find((p) => p.name === 'samples_p2031_05')!;
    expect(may.from.toISOString()).toBe('2031-05-01T00:00:00.000Z');
    expect(may.to.toISOString()).toBe('2031-06-01T00:00:00.000Z');
  });

  it('drops only partitions wholly older than the retention, keeping rollups longer', async () => {
    const w = new SampleWriter(db.pool, { flushIntervalMs: 0 });
    await w.write([
      { tagId: 60, time: Date.UTC(2025, 0, 10), value: 1, quality: QUALITY_GOOD },
      { tagId: 60, time: Date.UTC(2025, 1, 27), value: 2, quality: QUALITY_GOOD },
      { tagId: 60, time: Date.UTC(2025, 2, 2), value: 3, quality: QUALITY_GOOD },
    ]);
    await w.close();
    // now = 2025-04-01, 31 days: cutoff 2025-03-01; Jan and Feb end by then and go, March stays.
    const dropped = await applyRetention(
      db.pool,
      { samples: 31, samples_1m: 365, samples_1h: 3650 },
      new Date(Date.UTC(2025, 3, 1)),
    );
    expect(dropped).toEqual(expect.arrayContaining(['samples_p2025_01', 'samples_p2025_02']));
    expect(dropped.some((n) => n.startsWith('samples_1') || n === 'samples_p2025_03')).toBe(false);
    const left = await db.pool.query<{ v: number }>(
      'SELECT value AS v FROM samples WHERE tag_id = 60 ORDER BY time',
    );
    expect(left.rows.map((r) => r.v)).toEqual([3]);
    expect(await count('SELECT count(*)::int AS n FROM samples_1m WHERE tag_id = 60')).toBe(3);
    // A dropped month is recreated on demand by the writer.
    const w2 = new SampleWriter(db.pool, { flushIntervalMs: 0 });
    await w2.write([{ tagId: 60, time: Date.UTC(2025, 0, 11), value: 4, quality: QUALITY_GOOD }]);
    await w2.close();
    expect(await count('SELECT count(*)::int AS n FROM samples WHERE tag_id = 60')).toBe(2);
  });

  it('refuses a policy that keeps rollups shorter than raw samples', async () => {
    await expect(applyRetention(db.pool, { samples: 90, samples_1m: 30 })).rejects.toMatchObject({
      code: 'STORE_BAD_RETENTION',
    });
  });
});
