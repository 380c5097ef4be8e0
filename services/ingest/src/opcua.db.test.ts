import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { migrate, startEmbeddedPostgres } from '@isentrope/store';
import pg from 'pg';
import { pino } from 'pino';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../test/support/database.js';
import { DiskBuffer } from './buffer.js';
import { CommittedSink, Forwarder, guardPool } from './forward.js';
import { SourceMetrics } from './metrics.js';
import { loadNodeOpcua, OpcuaSource, qualityFromStatus } from './opcua.js';
import { type PlantServer, type Published, startPlantServer } from './testing/opcua-plant.js';
import { seedTags } from './testing/seed.js';

// Certificates are made once and reused across runs (making them is the slow part).
const PKI = join(tmpdir(), 'isentrope-ingest-test-pki');
const NAMES = ['ST1.PI-100', 'ST1.TI-100', 'ST1.FI-100'];
const logger = pino({ level: 'silent' });

let server: PlantServer;
let work: string;

beforeAll(async () => {
  work = await mkdtemp(join(tmpdir(), 'ingest-opcua-'));
  server = await startPlantServer({ names: NAMES, pkiDir: PKI, uncertainEvery: 5, badEvery: 7 });
}, 120_000);

afterAll(async () => {
  await server?.shutdown();
  if (work !== undefined) await rm(work, { recursive: true, force: true });
});

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

async function pipeline(pool: pg.Pool, ids: Map<string, number>, name: string) {
  const metrics = new SourceMetrics(name, 'opcua');
  const buffer = await DiskBuffer.open({ dir: join(work, name, 'buffer') });
  const forwarder = new Forwarder({
    sink: new CommittedSink(pool),
    buffer,
    metrics,
    logger,
    intervalMs: 100,
    retryInitialMs: 200,
    retryMaxMs: 1000,
  });
  const source = new OpcuaSource(
    {
      id: name,
      endpoint: server.endpoint,
      items: NAMES.map((n) => ({ tagId: ids.get(n)!, nodeId: `ns=1;s=${n}` })),
      samplingIntervalMs: 50,
      publishingIntervalMs: 100,
      queueSize: 1000,
      pkiDir: join(PKI, 'client'),
      acceptUnknownCertificates: true,
    },
    (s) => forwarder.add(s),
    metrics,
    logger,
  );
  return { metrics, forwarder, source };
}

/** What the server published for one tag from `from` [ms] on: time -> [value, quality]. */
function publishedOf(name: string, from: number): Map<number, [number, number]> {
  const m = new Map<number, [number, number]>();
  for (const p of server.published as Published[])
    if (p.name === name && p.time >= from) m.set(p.time, [p.value, qualityFromStatus(p.status)]);
  return m;
}

async function storedOf(pool: pg.Pool, tagId: number) {
  const r = await pool.query<{ time: Date; value: number; quality: number }>(
    'SELECT time, value, quality FROM samples WHERE tag_id = $1 ORDER BY time',
    [tagId],
  );
  return r.rows;
}

/**
 * A loaded machine may deliver the last notifications late: waits, bounded, until every change
 * published after the subscription is stored, instead of a fixed time. A change really lost is
 * still missing when the test compares below.
 */
async function waitUntilStored(
  pool: pg.Pool,
  ids: Map<string, number>,
  subscribedAt: number,
  forwarder: { settled(timeoutMs: number): Promise<boolean> },
  limitMs: number,
): Promise<void> {
  for (let waited = 0; waited < limitMs; waited += 250) {
    expect(await forwarder.settled(limitMs)).toBe(true);
    let missing = 0;
    for (const [name, id] of ids) {
      const times = new Set((await storedOf(pool, id)).map((s) => s.time.getTime()));
      for (const t of publishedOf(name, subscribedAt + 200).keys()) if (!times.has(t)) missing++;
    }
    if (missing === 0) return;
    await sleep(250);
  }
}

// What is stored is compared with what the test server published itself (by construction, common practice, no source).
describe('OPC UA ingest', () => {
  let db: TestDatabase;
  beforeAll(async () => {
    db = await createTestDatabase();
  });
  afterAll(async () => {
    await db?.drop();
  });

  it('stores what the server published, with source times and quality (Good 192, Uncertain 64, Bad 0)', async () => {
    const ids = await seedTags(
      db.pool,
      NAMES.map((name) => ({ name, unit: 'bara' })),
    );
    const { source, forwarder } = await pipeline(db.pool, ids, 'plain');
    await source.start();
    const subscribedAt = Date.now();
    server.play(100);
    await sleep(2500);
    server.pause();
    await waitUntilStored(db.pool, ids, subscribedAt, forwarder, 10_000);
    await source.stop();
    await forwarder.stop();
    for (const name of NAMES) {
      const stored = await storedOf(db.pool, ids.get(name)!);
      const all = publishedOf(name, 0);
      // Every stored sample is one the server published, exactly (time, value, quality).
      for (const s of stored)
        expect(all.get(s.time.getTime()), `${name} ${s.time.toISOString()}`).toEqual([s.value, s.quality]);
      // Every change published after the subscription started is stored.
      const after = publishedOf(name, subscribedAt + 200);
      expect(after.size).toBeGreaterThan(15);
      const times = new Set(stored.map((s) => s.time.getTime()));
      expect([...after.keys()].filter((t) => !times.has(t))).toEqual([]);
    }
    const first = await storedOf(db.pool, ids.get(NAMES[0]!)!);
    expect(new Set(first.map((s) => s.quality))).toEqual(new Set([192, 64, 0]));
  });

  it('connects with SignAndEncrypt (Basic256Sha256) using its own certificate', async () => {
    const got: number[] = [];
    const metrics = new SourceMetrics('secure', 'opcua');
    const source = new OpcuaSource(
      {
        id: 'secure',
        endpoint: server.endpoint,
        items: [{ tagId: 1, nodeId: `ns=1;s=${NAMES[1]}` }],
        samplingIntervalMs: 50,
        publishingIntervalMs: 100,
        securityMode: 'SignAndEncrypt',
        securityPolicy: 'Basic256Sha256',
        pkiDir: join(PKI, 'client'),
        acceptUnknownCertificates: true,
      },
      (s) => got.push(s.value),
      metrics,
      logger,
    );
    await source.start();
    server.play(100);
    await sleep(800);
    server.pause();
    await source.stop();
    expect(metrics.snapshot().errorsTotal).toBe(0);
    expect(got.length).toBeGreaterThan(3);
  });

  it('status code severity maps onto OPC DA quality (OPC UA Part 4, 7.39)', () => {
    expect(qualityFromStatus(0)).toBe(192); // Good
    expect(qualityFromStatus(0x408f0000)).toBe(64); // UncertainLastUsableValue
    expect(qualityFromStatus(0x808b0000)).toBe(0); // BadSensorFailure: severity bits 10
    expect(qualityFromStatus(0xc0000000)).toBe(0); // reserved severity 11 taken as bad
  });
});

describe('OPC UA ingest against a server whose sessions are all taken', () => {
  it('subscribes once a session is free again (a refused session does not leave the client stuck)', async () => {
    // One session at most, held by another client: like a restarted process whose killed
    // predecessor's session the server still keeps until its timeout.
    const busy = await startPlantServer({ names: NAMES, pkiDir: PKI, maxSessions: 1 });
    const { OPCUAClient } = await loadNodeOpcua();
    const holder = OPCUAClient.create({ endpointMustExist: false, connectionStrategy: { maxRetry: 0 } });
    const metrics = new SourceMetrics('busy', 'opcua');
    const source = new OpcuaSource(
      {
        id: 'busy',
        endpoint: busy.endpoint,
        items: [{ tagId: 1, nodeId: `ns=1;s=${NAMES[0]}` }],
        pkiDir: join(PKI, 'client'),
        acceptUnknownCertificates: true,
        reconnectInitialMs: 100,
        reconnectMaxMs: 500,
      },
      () => {},
      metrics,
      logger,
    );
    try {
      await holder.connect(busy.endpoint);
      const held = await holder.createSession();
      const started = source.start().then(() => 'subscribed' as const);
      for (let i = 0; i < 100 && metrics.snapshot().lastError === null; i++) await sleep(100);
      expect(metrics.snapshot().lastError).toContain('connect');
      await held.close();
      await holder.disconnect();
      expect(await Promise.race([started, sleep(20_000).then(() => 'still refused' as const)])).toBe(
        'subscribed',
      );
      expect(metrics.state).toBe('connected');
    } finally {
      await source.stop();
      await holder.disconnect().catch(() => {});
      await busy.shutdown();
    }
  }, 60_000);
});

describe('OPC UA ingest while the database stops and restarts', () => {
  let pgDir: string;
  let stopPg: (() => Promise<void>) | undefined;
  afterAll(async () => {
    await stopPg?.();
    if (pgDir !== undefined) await rm(pgDir, { recursive: true, force: true });
  });

  it('buffers on disk while the database is down and stores every sample exactly once', async () => {
    pgDir = await mkdtemp(join(tmpdir(), 'ingest-pg-'));
    const first = await startEmbeddedPostgres({ dataDir: pgDir });
    stopPg = first.stop;
    await migrate(first.url);
    const pool = guardPool(
      new pg.Pool({ connectionString: first.url, max: 4, connectionTimeoutMillis: 2000 }),
    );
    try {
      const ids = await seedTags(
        pool,
        NAMES.map((name) => ({ name, unit: 'bara' })),
      );
      const { source, forwarder, metrics } = await pipeline(pool, ids, 'outage');
      await source.start();
      const subscribedAt = Date.now();
      server.play(100);
      await sleep(1200);
      await first.stop();
      stopPg = undefined;
      await sleep(2500);
      const during = metrics.snapshot();
      expect(during.state).toBe('buffering');
      expect(during.bufferDepth).toBeGreaterThan(0);
      const again = await startEmbeddedPostgres({ dataDir: pgDir, port: first.port });
      stopPg = again.stop;
      await sleep(1500);
      server.pause();
      await waitUntilStored(pool, ids, subscribedAt, forwarder, 20_000);
      await source.stop();
      await forwarder.stop();
      for (const name of NAMES) {
        const stored = await storedOf(pool, ids.get(name)!);
        const after = publishedOf(name, subscribedAt + 200);
        const times = stored.map((s) => s.time.getTime());
        expect(new Set(times).size).toBe(times.length); // no sample twice
        const missing = [...after.keys()].filter((t) => !times.includes(t)).map((t) => t - subscribedAt);
        expect(missing, `missing, ms after subscribing; ${JSON.stringify(metrics.snapshot())}`).toEqual([]);
        for (const s of stored)
          expect(publishedOf(name, 0).get(s.time.getTime())).toEqual([s.value, s.quality]);
      }
      expect(metrics.snapshot().bufferDepth).toBe(0);
    } finally {
      await pool.end();
    }
  });
});
