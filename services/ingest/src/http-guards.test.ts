import { Writable } from 'node:stream';
import rateLimit from '@fastify/rate-limit';
import Fastify, { type FastifyInstance } from 'fastify';
import { afterEach, describe, expect, it } from 'vitest';
import { type HttpPushOptions, httpPushRoutes, sha256Hex } from './http.js';
import { RecordingSink } from './testing/recording-sink.js';
import { tagLookupFrom } from './types.js';

const TOKEN = 'bridge-secret-0123456789';
const auth = { authorization: `Bearer ${TOKEN}` };
const tags = tagLookupFrom([{ id: 1, name: 'ST1.PI-100', unit: 'bara' }]);
const NOW = Date.parse('2026-03-01T10:00:00Z');

let app: FastifyInstance | undefined;
afterEach(async () => {
  await app?.close();
  app = undefined;
});

const post = (a: FastifyInstance, payload: unknown[]) =>
  a.inject({ method: 'POST', url: '/ingest/samples', headers: auth, payload });

/** Log lines the app wrote, parsed. */
function logCapture(): { lines: Record<string, unknown>[]; stream: Writable } {
  const lines: Record<string, unknown>[] = [];
  const stream = new Writable({
    write(chunk: Buffer, _encoding, done) {
      for (const l of chunk.toString().split('\n')) if (l.trim() !== '') lines.push(JSON.parse(l));
      done();
    },
  });
  return { lines, stream };
}

async function pushApp(
  sink: RecordingSink,
  extra: Partial<HttpPushOptions> = {},
  setup?: (a: FastifyInstance) => Promise<void>,
  logStream?: Writable,
): Promise<FastifyInstance> {
  const a = Fastify({ logger: logStream === undefined ? false : { level: 'info', stream: logStream } });
  await setup?.(a);
  await a.register(httpPushRoutes, { sink, tags, tokenSha256: sha256Hex(TOKEN), now: () => NOW, ...extra });
  await a.ready();
  app = a;
  return a;
}

// Issue 18 item 8: one absurd time must not fail the batch; the window is 1970 to now + 1 day by default.
describe('push: the plausibility window for sample times', () => {
  it('refuses year 0001, 9999 and epoch ms 8.64e15 per item and stores the good item', async () => {
    const sink = new RecordingSink();
    const a = await pushApp(sink);
    const res = await post(a, [
      { tag: 'ST1.PI-100', time: '0001-01-01T00:00:00Z', value: 1 },
      { tag: 'ST1.PI-100', time: '2026-03-01T09:00:00Z', value: 42.5 },
      { tag: 'ST1.PI-100', time: '9999-12-31T23:59:59Z', value: 2 },
      { tag: 'ST1.PI-100', time: 8.64e15, value: 3 },
      // now + 1 day + 1 ms: just outside (the window's edge, by construction).
      { tag: 'ST1.PI-100', time: NOW + 86_400_001, value: 4 },
      { tag: 'ST1.PI-100', time: NOW + 86_400_000, value: 5 },
    ]);
    expect(res.statusCode).toBe(200);
    const body = res.json();
    expect(body.accepted).toBe(2);
    expect(body.rejected.map((r: { index: number; field: string }) => [r.index, r.field])).toEqual([
      [0, 'time'],
      [2, 'time'],
      [3, 'time'],
      [4, 'time'],
    ]);
    expect(body.rejected[0].problem).toContain('outside the plausible window');
    expect(sink.stored.map((s) => s.value)).toEqual([42.5, 5]);
  });

  it('takes its bounds from the options', async () => {
    const sink = new RecordingSink();
    const a = await pushApp(sink, {
      timeWindow: { earliestMs: Date.parse('2020-01-01T00:00:00Z'), aheadMs: 0 },
    });
    const res = await post(a, [
      { tag: 'ST1.PI-100', time: '2019-12-31T23:59:59Z', value: 1 },
      { tag: 'ST1.PI-100', time: NOW + 1, value: 2 },
      { tag: 'ST1.PI-100', time: NOW, value: 3 },
    ]);
    expect(res.json().rejected.map((r: { index: number }) => r.index)).toEqual([0, 1]);
    expect(sink.stored.map((s) => s.value)).toEqual([3]);
  });

  it('logs every 5xx with its cause', async () => {
    const sink = new RecordingSink();
    sink.failing = true;
    const log = logCapture();
    const a = await pushApp(sink, {}, undefined, log.stream);
    const res = await a.inject({
      method: 'POST',
      url: '/ingest/samples',
      headers: auth,
      payload: [{ tag: 'ST1.PI-100', time: '2026-03-01T09:00:00Z', value: 1 }],
    });
    expect(res.statusCode).toBe(503);
    const errors = log.lines.filter((l) => l.level === 50);
    expect(errors).toHaveLength(1);
    expect(errors[0]).toMatchObject({ err: { message: 'connection refused' }, samples: 1 });
  });
});

// Issue 18 item 11: the token is checked before the body is read.
describe('push: bearer token before the body', () => {
  it('answers 401 to a 14 MB body without a token, without parsing it', async () => {
    let parsed = 0;
    const a = await pushApp(new RecordingSink(), {}, async (root) => {
      root.addHook('preParsing', async () => {
        parsed++;
      });
    });
    // Not even JSON: parsed, it would be a 400; refused before parsing, it is a 401.
    const body = `[${'x'.repeat(14 * 1024 * 1024)}`;
    const res = await a.inject({
      method: 'POST',
      url: '/ingest/samples',
      headers: { 'content-type': 'application/json' },
      payload: body,
    });
    expect(res.statusCode).toBe(401);
    expect(res.json()).toMatchObject({ code: 'INGEST_UNAUTHORIZED' });
    expect(parsed).toBe(0);
  });
});

// Issue 18 item 10: the push route has its own limit, not the API's per-address one, and says when to retry.
describe('push: its own rate limit', () => {
  it('counts push requests apart from the global limit and answers 429 with Retry-After', async () => {
    const a = await pushApp(
      new RecordingSink(),
      { rateLimit: { max: 3, timeWindowMs: 60_000 } },
      async (root) => {
        await root.register(rateLimit, { max: 2, timeWindow: 60_000 });
        root.get('/other', async () => ({ ok: true }));
      },
    );
    const other = [];
    for (let i = 0; i < 3; i++) other.push((await a.inject({ method: 'GET', url: '/other' })).statusCode);
    expect(other).toEqual([200, 200, 429]); // the global limit is spent
    const push = () => post(a, [{ tag: 'ST1.PI-100', time: '2026-03-01T09:00:00Z', value: 1 }]);
    const codes = [];
    for (let i = 0; i < 3; i++) codes.push((await push()).statusCode);
    expect(codes).toEqual([200, 200, 200]);
    const limited = await push();
    expect(limited.statusCode).toBe(429);
    expect(Number(limited.headers['retry-after'])).toBeGreaterThan(0);
    expect(Number(limited.headers['retry-after'])).toBeLessThanOrEqual(60);
    expect(limited.json()).toMatchObject({
      code: 'INGEST_RATE_LIMITED',
      retryAfterSeconds: expect.any(Number),
    });
  });
});
