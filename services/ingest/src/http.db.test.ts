import Fastify, { type FastifyInstance } from 'fastify';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../test/support/database.js';
import { CommittedSink } from './forward.js';
import { httpPushRoutes, sha256Hex } from './http.js';
import { loadTagLookup } from './tags.js';
import { seedTags } from './testing/seed.js';

const TOKEN = 'bridge-secret-0123456789';
let db: TestDatabase;
let app: FastifyInstance;
let ids: Map<string, number>;

beforeAll(async () => {
  db = await createTestDatabase();
  ids = await seedTags(db.pool);
  app = Fastify({ logger: false });
  await app.register(httpPushRoutes, {
    sink: new CommittedSink(db.pool),
    tags: await loadTagLookup(db.pool, 'demo'),
    tokenSha256: sha256Hex(TOKEN),
  });
  await app.ready();
});
afterAll(async () => {
  await app?.close();
  await db?.drop();
});

const push = (payload: unknown[]) =>
  app.inject({
    method: 'POST',
    url: '/ingest/samples',
    headers: { authorization: `Bearer ${TOKEN}` },
    payload,
  });

async function stored(tag: string): Promise<[string, number][]> {
  const r = await db.pool.query<{ time: Date; value: number }>(
    'SELECT time, value FROM samples WHERE tag_id = $1 ORDER BY time',
    [ids.get(tag)],
  );
  return r.rows.map((x) => [x.time.toISOString(), x.value]);
}

// Issue 18 item 8, against the real store (counts by construction, common practice, no source).
describe('push into the store: absurd times', () => {
  it('stores the good items of a batch that holds year 0001, 9999 and epoch ms 8.64e15', async () => {
    const res = await push([
      { tag: 'ST1.PI-100', time: '0001-01-01T00:00:00Z', value: 1 },
      { tag: 'ST1.PI-100', time: '2026-02-01T00:00:00Z', value: 40.5 },
      { tag: 'ST1.PI-100', time: '9999-12-31T23:59:59Z', value: 2 },
      { tag: 'ST1.PI-100', time: 8.64e15, value: 3 },
    ]);
    expect(res.statusCode).toBe(200);
    expect(res.json()).toMatchObject({ accepted: 1 });
    expect(await stored('ST1.PI-100')).toEqual([['2026-02-01T00:00:00.000Z', 40.5]]);
  });

  it('stores a plausible 1970 item and a 2026 item sent in one batch (decades apart)', async () => {
    const res = await push([
      { tag: 'ST1.TI-100', time: '1970-01-02T00:00:00Z', value: 10 },
      { tag: 'ST1.TI-100', time: '2026-02-01T00:00:00Z', value: 500 },
    ]);
    expect(res.statusCode).toBe(200);
    expect(res.json()).toMatchObject({ accepted: 2 });
    expect(await stored('ST1.TI-100')).toEqual([
      ['1970-01-02T00:00:00.000Z', 10],
      ['2026-02-01T00:00:00.000Z', 500],
    ]);
  });
});

// Issue 18 item 9: three items of one key answered accepted: 3 (1 stored); a later other value accepted: 1, not stored.
describe('push into the store: what became of each item', () => {
  const t = '2026-02-02T00:00:00Z';
  it('names stored, duplicate and conflict per item, inside one batch and against stored values', async () => {
    const first = await push([
      { tag: 'ST1.FI-100', time: t, value: 120 },
      { tag: 'ST1.FI-100', time: t, value: 120 },
      { tag: 'ST1.FI-100', time: t, value: 121, quality: 192 },
      { tag: 'ST1.FI-100', time: t, value: 120, quality: 64 },
      { tag: 'NOPE', time: t, value: 1 },
    ]);
    expect(first.statusCode).toBe(200);
    expect(first.json()).toMatchObject({
      accepted: 1,
      stored: 1,
      duplicates: 1,
      items: ['stored', 'duplicate', 'conflict', 'conflict', 'rejected'],
      conflicts: [
        { index: 2, value: 121, quality: 192, storedValue: 120, storedQuality: 192 },
        { index: 3, value: 120, quality: 64, storedValue: 120, storedQuality: 192 },
      ],
    });
    const later = await push([
      { tag: 'ST1.FI-100', time: t, value: 125 },
      { tag: 'ST1.FI-100', time: t, value: 120 },
    ]);
    expect(later.json()).toMatchObject({
      accepted: 0,
      stored: 0,
      duplicates: 1,
      items: ['conflict', 'duplicate'],
      conflicts: [{ index: 0, value: 125, storedValue: 120 }],
    });
    expect(await stored('ST1.FI-100')).toEqual([['2026-02-02T00:00:00.000Z', 120]]);
  });

  it('counts a batch of new and already stored items exactly', async () => {
    const res = await push([
      { tag: 'ST1.FI-100', time: t, value: 120 },
      { tag: 'ST1.FI-100', time: '2026-02-02T00:00:01Z', value: 122 },
    ]);
    // The store counts both kinds without naming its duplicates (INTERFACES.md A): each item says so.
    expect(res.json()).toMatchObject({
      accepted: 1,
      stored: 1,
      duplicates: 1,
      items: ['stored-or-duplicate', 'stored-or-duplicate'],
    });
  });
});
