/**
 * The demo plant (DEMO DATA - INVENTED) before and after its history is packed into compressed
 * blocks: the raw series, the dashboard's trend and sample pages, the compute results, the
 * gauge/absolute step and the monthly export give the same figures, bit for bit, from the hot
 * table as from the blocks. A shortened 10-day history.
 */
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { type PreparedDemo, prepareDemo } from '@isentrope/demo';
import { backfill, backfillAnalysis, runGaugeAbsoluteOnce } from '@isentrope/jobs';
import { gatherMonth } from '@isentrope/monitor';
import { monthlyFigures, packSamples, readSeries, readTrend } from '@isentrope/store';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildMonthlyReport } from '../../packages/monitor/src/report/monthly.js';
import { listSamples, sampleTrend } from '../../services/api/src/queries/samples.js';
import { createTestDatabase, type TestDatabase } from '../support/database.js';

const DAY = 86_400_000;
// Inside one calendar month, so one monthly export holds the whole history.
const NOW = Date.parse('2026-03-25T00:00:00Z');

/**
 * Paths where two plain JSON-like values differ: structure and non-numbers exactly, numbers
 * beyond a relative 1e-9 (see the export check for why the export needs any tolerance).
 */
function differences(a: unknown, b: unknown, path = ''): string[] {
  if (typeof a === 'number' && typeof b === 'number') {
    if (Object.is(a, b)) return [];
    return Math.abs(a - b) <= 1e-9 * Math.max(Math.abs(a), Math.abs(b)) ? [] : [`${path}: ${a} != ${b}`];
  }
  if (a !== null && b !== null && typeof a === 'object' && typeof b === 'object') {
    const keys = new Set([...Object.keys(a), ...Object.keys(b)]);
    return [...keys].flatMap((k) =>
      differences((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k], `${path}.${k}`),
    );
  }
  return Object.is(a, b) ? [] : [`${path}: ${String(a)} != ${String(b)}`];
}

interface Figures {
  series: string;
  results: string;
  dashboard: unknown[];
  gauge: unknown;
  report: unknown;
}

/** Everything a user sees that comes from raw samples, as comparable values. */
async function figures(db: TestDatabase, demo: PreparedDemo): Promise<Figures> {
  const tagIds = [...new Map(Object.entries(demo.applied.tags)).values()] as number[];
  const all = await readSeries(db.pool, tagIds, Number.NEGATIVE_INFINITY, Number.POSITIVE_INFINITY);
  const series = tagIds
    .map((id) => {
      const s = all.get(id);
      if (s === undefined) return `${id}:none`;
      const bytes = (a: ArrayBufferView): string =>
        Buffer.from(a.buffer, a.byteOffset, a.byteLength).toString('base64');
      return `${id}:${bytes(s.times)}:${bytes(s.values)}:${bytes(s.qualities)}`;
    })
    .join('\n');
  await backfill(db.pool, { from: demo.span.start, to: demo.historyEnd });
  const r = await db.pool.query<{ h: string; n: number }>(
    `SELECT md5(string_agg((to_jsonb(r) - 'computed_at' - 'analyzed_at' - 'baseline_id' - 'baseline_efficiency'
              - 'u_baseline' - 'drift' - 'u_drift' - 'flags' - 'valid')::text, ',' ORDER BY machine_id, time)) AS h,
            count(*)::int AS n FROM results r`,
  );
  const gauge = await runGaugeAbsoluteOnce(db.pool, { nowMs: demo.historyEnd });
  await backfillAnalysis(db.pool, { nowMs: demo.historyEnd });
  const report = buildMonthlyReport(
    await gatherMonth(monthlyFigures(db.pool), '2026-03', { generatedAtMs: NOW, minPointsPerDay: 60 }),
  );
  // The dashboard over a packed stretch (day 3 to 5) and a page of raw samples across the cutoff.
  const dashboard: unknown[] = [];
  for (const id of tagIds.slice(0, 6)) {
    const from = demo.span.start + 3 * DAY + 12_345;
    dashboard.push(await sampleTrend(db.pool, id, from, from + 2 * DAY, 300));
    dashboard.push(
      await readTrend(db.pool, {
        series: { kind: 'tag', tagId: id },
        from: new Date(from),
        to: new Date(from + 2 * DAY),
        buckets: 500,
      }),
    );
    dashboard.push(
      await listSamples(db.pool, id, NOW - 3 * DAY - 3_600_000, NOW, 200, NOW - 3 * DAY - 60_000),
    );
  }
  return { series, results: `${r.rows[0]?.n} ${r.rows[0]?.h}`, dashboard, gauge, report };
}

describe('demo plant before and after packing its history', () => {
  // Two databases with the same invented history: one left hot, one packed, so neither run
  // sees findings or baselines the other wrote.
  let hotDb: TestDatabase;
  let db: TestDatabase;
  const dirs: string[] = [];
  let demo: PreparedDemo;
  let hot: Figures;
  let packed: Figures;
  let blocks: number;

  beforeAll(async () => {
    const setUp = async (pack: boolean): Promise<{ db: TestDatabase; demo: PreparedDemo }> => {
      const d = await createTestDatabase();
      const dir = await mkdtemp(join(tmpdir(), 'isentrope-demo-blocks-'));
      dirs.push(dir);
      return {
        db: d,
        demo: await prepareDemo({ pool: d.pool, dataDir: dir, days: 10, now: () => NOW, pack }),
      };
    };
    const a = await setUp(false);
    hotDb = a.db;
    hot = await figures(hotDb, a.demo);
    const b = await setUp(false);
    db = b.db;
    demo = b.demo;
    // What the first start does (prepareDemo's pack), here explicit to count the blocks.
    blocks = (await packSamples(db.pool, { nowMs: NOW })).blocksWritten;
    packed = await figures(db, demo);
  }, 900_000);

  afterAll(async () => {
    await hotDb?.drop();
    await db?.drop();
    for (const dir of dirs) await rm(dir, { recursive: true, force: true });
  });

  it('packed most of the history: blocks hold every sample older than two whole days', async () => {
    expect(blocks).toBeGreaterThan(0);
    const r = await db.pool.query<{ hot: number; old: number }>(
      `SELECT count(*)::int AS hot, count(*) FILTER (WHERE time < $1)::int AS old FROM samples`,
      [new Date(NOW - 2 * DAY)],
    );
    expect(r.rows[0]?.old).toBe(0);
    expect(r.rows[0]?.hot).toBeLessThan(demo.samplesWritten / 3);
  });

  it('reads the same raw series, bit for bit', () => {
    expect(packed.series.length).toBeGreaterThan(1000);
    expect(packed.series).toBe(hot.series);
  });

  it('computes the same results', () => {
    expect(packed.results).toBe(hot.results);
    expect(Number(hot.results.split(' ')[0])).toBeGreaterThan(1000);
  });

  it('shows the same dashboard trends and sample pages', () => {
    expect(packed.dashboard).toEqual(hot.dashboard);
  });

  it('finds the same gauge/absolute figures and the same monthly export', () => {
    expect(packed.gauge).toEqual(hot.gauge);
    // Within a relative 1e-9: the analysis averages results in SQL in heap order, which the
    // compute threads' parallel writes vary from one database to the next; two databases both
    // left unpacked differ in the same last digits (checked), so the blocks are not the cause.
    expect(differences(packed.report, hot.report)).toEqual([]);
    expect(JSON.stringify(packed.report).length).toBeGreaterThan(1000);
  });
});
