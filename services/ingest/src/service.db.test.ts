import { appendFile, mkdir, mkdtemp, readdir, rename, rm, utimes, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { parsePlantFile } from '@isentrope/plant';
import Fastify from 'fastify';
import { pino } from 'pino';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../test/support/database.js';
import { CsvWatcher } from './csv/watch.js';
import { httpPushRoutes, sha256Hex } from './http.js';
import { SourceMetrics } from './metrics.js';
import { startIngest } from './service.js';
import { loadTagLookup } from './tags.js';
import { seedTags } from './testing/seed.js';

const logger = pino({ level: 'silent' });
let db: TestDatabase;
let dir: string;

beforeAll(async () => {
  db = await createTestDatabase();
  await seedTags(db.pool, undefined, 'demo');
  dir = await mkdtemp(join(tmpdir(), 'ingest-service-'));
});
afterAll(async () => {
  await db?.drop();
  if (dir !== undefined) await rm(dir, { recursive: true, force: true });
});

const count = async () =>
  (await db.pool.query<{ n: number }>('SELECT count(*)::int AS n FROM samples')).rows[0]!.n;

// Counts below are by construction of the invented files (common practice, no source).
describe('CSV drop folder', () => {
  it('reads a file only once its size held still over two polls, and never a .part file', async () => {
    const folder = join(dir, 'drop-a');
    await mkdir(folder);
    const metrics = new SourceMetrics('drop-a', 'csv');
    const watcher = new CsvWatcher({
      pool: db.pool,
      source: 'drop-a',
      tags: await loadTagLookup(db.pool, 'demo'),
      folder,
      metrics,
      logger,
    });
    const file = join(folder, 'a.csv');
    await writeFile(file, 'time,ST1.PI-100\n2026-02-01T00:00:00Z,1\n');
    await writeFile(join(folder, 'b.csv.part'), 'time,ST1.PI-100\n2026-02-01T00:00:05Z,9\n');
    await watcher.poll(); // first sight: size noted
    await appendFile(file, '2026-02-01T00:00:01Z,2\n'); // still being written
    await watcher.poll(); // size changed: not read
    expect(await count()).toBe(0);
    await watcher.poll(); // held still: read
    expect(await count()).toBe(2);
    expect(await readdir(folder)).toEqual(expect.arrayContaining(['b.csv.part', 'processed']));
    await rename(join(folder, 'b.csv.part'), join(folder, 'b.csv'));
    await watcher.poll();
    await watcher.poll();
    expect(await count()).toBe(3);
    const snap = metrics.snapshot();
    expect(snap.filesProcessed).toBe(2);
    expect(snap.samplesTotal).toBe(3);
  });
});

// Issue 18 item 13: a file whose last line has no line end was read while its writer paused mid-line ("90" of "90.4").
describe('CSV drop folder: a last line without a line end', () => {
  it('holds the file back until it grows or settles; a file renamed from *.part is read at once', async () => {
    const folder = join(dir, 'drop-db');
    await mkdir(folder, { recursive: true });
    const watcher = new CsvWatcher({
      pool: db.pool,
      source: 'drop-c',
      tags: await loadTagLookup(db.pool, 'demo'),
      folder,
      metrics: new SourceMetrics('drop-db', 'csv'),
      logger,
    });
    const values = async () =>
      (
        await db.pool.query<{ value: number }>(
          `SELECT s.value FROM samples s JOIN tags t ON t.id = s.tag_id WHERE t.name = 'ST1.FI-100' ORDER BY s.time`,
        )
      ).rows.map((r) => r.value);
    const file = join(folder, 'cut.csv');
    await writeFile(file, 'time,ST1.FI-100\n2026-02-05T00:00:00Z,89.9\n2026-02-05T00:00:01Z,90');
    await watcher.poll();
    await watcher.poll(); // held still, but the last line may be cut: held back
    await watcher.poll();
    expect(await values()).toEqual([]);
    await appendFile(file, '.4\n'); // the writer goes on
    await watcher.poll();
    await watcher.poll();
    expect(await values()).toEqual([89.9, 90.4]);

    // Unchanged for longer than the settling time: read, last line included.
    const old = join(folder, 'old.csv');
    await writeFile(old, 'time,ST1.FI-100\n2026-02-05T00:00:02Z,91');
    const past = new Date(Date.now() - 10 * 60_000);
    await utimes(old, past, past);
    await watcher.poll();
    await watcher.poll();
    expect(await values()).toEqual([89.9, 90.4, 91]);

    // Written as *.part and renamed: complete, read without waiting.
    await writeFile(join(folder, 'new.csv.part'), 'time,ST1.FI-100\n2026-02-05T00:00:03Z,92');
    await watcher.poll();
    await rename(join(folder, 'new.csv.part'), join(folder, 'new.csv'));
    await watcher.poll();
    await watcher.poll();
    expect(await values()).toEqual([89.9, 90.4, 91, 92]);
  });
});

describe('startIngest', () => {
  it('runs the plant file CSV source, reports health and metrics, and serves HTTP push with its sink', async () => {
    const folder = join(dir, 'drop-b');
    await mkdir(folder);
    const plant = parsePlantFile(
      JSON.stringify({
        version: 1,
        site: { id: 'demo', name: 'Demo (invented)', timeZone: 'Europe/Berlin' },
        tags: [
          { name: 'ST1.PI-100', role: 'other', unit: 'bara' },
          { name: 'ST1.TI-100', role: 'other', unit: 'degC' },
        ],
        // The file's format comes from the plant file: ';' between fields, ',' as decimal mark.
        sources: [{ kind: 'csv', id: 'drop-b', folder, layout: 'long', delimiter: ';', decimalComma: true }],
      }),
      'plant.json',
    );
    const service = await startIngest({
      pool: db.pool,
      databaseUrl: db.url,
      logger,
      dataDir: join(dir, 'data'),
      plant,
      csv: { 'drop-b': { pollMs: 100 } },
    });
    try {
      const before = await count();
      // Local time of the site's zone: 10:00 CET is 09:00Z (Europe/Berlin, winter).
      await writeFile(
        join(folder, 'long.csv'),
        'tag;time;value\nST1.TI-100;2026-02-03 10:00:00;510,5\nST1.TI-100;2026-02-03 10:01:00;511\n',
      );
      // The file counts as processed just after its rows commit: wait (bounded) for both.
      const processed = (): number =>
        service.metrics().find((s) => s.source === 'drop-b')?.filesProcessed ?? 0;
      for (let i = 0; i < 100 && ((await count()) < before + 2 || processed() < 1); i++)
        await new Promise((r) => setTimeout(r, 100));
      const r = await db.pool.query<{ time: Date }>(
        `SELECT s.time FROM samples s JOIN tags t ON t.id = s.tag_id WHERE t.name = 'ST1.TI-100' ORDER BY s.time`,
      );
      expect(
        r.rows.map((x) => x.time.toISOString()),
        JSON.stringify(service.metrics()),
      ).toEqual(['2026-02-03T09:00:00.000Z', '2026-02-03T09:01:00.000Z']);
      const health = service.health();
      expect(health.status).toBe('ok');
      expect(health.sources).toEqual([
        expect.objectContaining({ source: 'drop-b', kind: 'csv', state: 'running' }),
      ]);
      const m = service.metrics().find((s) => s.source === 'drop-b');
      expect(m).toMatchObject({ samplesTotal: 2, filesProcessed: 1 });
      expect(service.renderMetrics()).toContain(
        'isentrope_ingest_files_processed_total{source="drop-b",kind="csv"} 1',
      );

      const app = Fastify({ logger: false });
      await app.register(httpPushRoutes, service.httpPushOptions(sha256Hex('t0ken')));
      const res = await app.inject({
        method: 'POST',
        url: '/ingest/samples',
        headers: { authorization: 'Bearer t0ken' },
        payload: [{ tag: 'ST1.PI-100', time: '2026-02-03T09:00:00Z', value: 40 }],
      });
      expect(res.json()).toEqual({
        accepted: 1,
        stored: 1,
        duplicates: 0,
        conflicts: [],
        rejected: [],
        items: ['stored'],
      });
      const again = await app.inject({
        method: 'POST',
        url: '/ingest/samples',
        headers: { authorization: 'Bearer t0ken' },
        payload: [{ tag: 'ST1.PI-100', time: '2026-02-03T09:00:00Z', value: 40 }],
      });
      expect(again.statusCode).toBe(200);
      expect(again.json()).toMatchObject({ accepted: 0, stored: 0, duplicates: 1, items: ['duplicate'] });
      const pushed = await db.pool.query<{ n: number }>(
        `SELECT count(*)::int AS n FROM samples s JOIN tags t ON t.id = s.tag_id WHERE t.name = 'ST1.PI-100' AND s.time = '2026-02-03T09:00:00Z'`,
      );
      expect(pushed.rows[0]!.n).toBe(1); // a re-sent batch is stored once
      await app.close();
    } finally {
      await service.stop();
    }
  });

  it('reads CSV times without an offset in the site zone when the sources come from the database', async () => {
    const folder = join(dir, 'drop-db');
    await mkdir(folder, { recursive: true });
    // As `plant load` leaves it: the source in the sources table, the zone on its site (seeded Europe/Berlin).
    await db.pool.query(
      `INSERT INTO sources (site_id, slug, kind, spec)
       SELECT id, 'drop-db', 'csv', $1::jsonb FROM sites WHERE slug = 'demo'`,
      [JSON.stringify({ kind: 'csv', id: 'drop-db', folder, layout: 'long' })],
    );
    const service = await startIngest({
      pool: db.pool,
      databaseUrl: db.url,
      logger,
      dataDir: join(dir, 'data-db'),
      csv: { 'drop-db': { pollMs: 100 } },
    });
    try {
      const time = async () =>
        (
          await db.pool.query<{ time: Date }>(
            `SELECT s.time FROM samples s JOIN tags t ON t.id = s.tag_id WHERE t.name = 'ST1.FI-100' AND s.time::date = '2026-02-03'`,
          )
        ).rows.map((x) => x.time.toISOString());
      await writeFile(join(folder, 'long.csv'), 'tag,time,value\nST1.FI-100,2026-02-03 10:00:00,12\n');
      for (let i = 0; i < 100 && (await time()).length === 0; i++)
        await new Promise((r) => setTimeout(r, 100));
      // 10:00 CET is 09:00Z (Europe/Berlin, winter: UTC+1, IANA tz database).
      expect(await time(), JSON.stringify(service.metrics())).toEqual(['2026-02-03T09:00:00.000Z']);
    } finally {
      await service.stop();
    }
  });
});
