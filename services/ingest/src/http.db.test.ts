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
    // The store names its duplicates (duplicateRefs), so each item says which it was.
    expect(res.json()).toMatchObject({
      accepted: 1,
      stored: 1,
      duplicates: 1,
      items: ['duplicate', 'stored'],
    });
  });

  it('answers every item of a mixed batch exactly: new, already stored, conflicting, repeated in the batch', async () => {
    const at = (s: number) => `2026-02-03T00:00:0${s}Z`;
    await push([
      { tag: 'ST1.PI-100', time: at(0), value: 10 },
      { tag: 'ST1.PI-100', time: at(1), value: 11 },
      { tag: 'ST1.TI-100', time: at(2), value: 300 },
    ]);
    const res = await push([
      { tag: 'ST1.PI-100', time: at(5), value: 15 }, // new
      { tag: 'ST1.PI-100', time: at(0), value: 10 }, // stored before
      { tag: 'ST1.TI-100', time: at(3), value: 301 }, // new (another tag)
      { tag: 'ST1.PI-100', time: at(1), value: 12 }, // conflict: 11 is kept
      { tag: 'ST1.PI-100', time: at(5), value: 15 }, // repeat of item 0 in this batch
      { tag: 'ST1.TI-100', time: at(2), value: 300, quality: 192 }, // stored before
      { tag: 'ST1.PI-100', time: at(4), value: 14 }, // new, earlier than stored times: staging path
      { tag: 'ST1.TI-100', time: at(3), value: 302 }, // repeat of item 2 with another value: conflict
    ]);
    expect(res.statusCode).toBe(200);
    expect(res.json()).toMatchObject({
      accepted: 3,
      stored: 3,
      duplicates: 3,
      items: ['stored', 'duplicate', 'stored', 'conflict', 'duplicate', 'duplicate', 'stored', 'conflict'],
      conflicts: [
        { index: 3, value: 12, storedValue: 11 },
        { index: 7, value: 302, storedValue: 301 },
      ],
    });
    // Sent again: every item stored before, each named so.
    const again = await push([
      { tag: 'ST1.PI-100', time: at(5), value: 15 },
      { tag: 'ST1.PI-100', time: at(4), value: 14 },
      { tag: 'ST1.TI-100', time: at(3), value: 301 },
    ]);
    expect(again.json()).toMatchObject({
      stored: 0,
      duplicates: 3,
      items: ['duplicate', 'duplicate', 'duplicate'],
    });
  });
});
