import Fastify from 'fastify';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { httpPushRoutes, sha256Hex, tokenMatches } from './http.js';
import { renderIngestMetrics, SourceMetrics } from './metrics.js';
import { RecordingSink } from './testing/recording-sink.js';
import { tagLookupFrom } from './types.js';

const TOKEN = 'bridge-secret-0123456789';
const sink = new RecordingSink();
const metrics = new SourceMetrics('http', 'http', () => Date.parse('2026-03-01T10:00:05Z'));
const app = Fastify({ logger: false });

beforeAll(async () => {
  await app.register(httpPushRoutes, {
    sink,
    tags: tagLookupFrom([
      { id: 1, name: 'ST1.PI-100', unit: 'bara' },
      { id: 2, name: 'ST1.TI-100', unit: 'degC' },
    ]),
    tokenSha256: sha256Hex(TOKEN),
    maxItems: 5,
    metrics,
  });
  await app.ready();
});
afterAll(() => app.close());

const auth = { authorization: `Bearer ${TOKEN}` };

describe('POST /ingest/samples', () => {
  it('refuses a missing or wrong token with 401', async () => {
    const none = await app.inject({ method: 'POST', url: '/ingest/samples', payload: [] });
    expect(none.statusCode).toBe(401);
    const wrong = await app.inject({
      method: 'POST',
      url: '/ingest/samples',
      payload: [],
      headers: { authorization: 'Bearer nope' },
    });
    expect(wrong.statusCode).toBe(401);
    expect(wrong.json()).toMatchObject({ code: 'INGEST_UNAUTHORIZED' });
    expect(tokenMatches(TOKEN, sha256Hex(TOKEN))).toBe(true);
  });

  it('stores the good items and names each bad one by index and field', async () => {
    const res = await app.inject({
      method: 'POST',
      url: '/ingest/samples',
      headers: auth,
      payload: [
        { tag: 'ST1.PI-100', time: '2026-03-01T11:00:00+01:00', value: 42.5 },
        { tag: 'ST1.TI-100', time: 1772359200000, value: 510.2, quality: 64 },
        { tag: 'NOPE', time: '2026-03-01T10:00:00Z', value: 1 },
        { tag: 'ST1.PI-100', time: '2026-03-01 10:00:00', value: 1 },
        { tag: 'ST1.PI-100', time: '2026-03-01T10:00:01Z', value: 'x', extra: true },
      ],
    });
    expect(res.statusCode).toBe(200);
    const body = res.json();
    expect(body.accepted).toBe(2);
    const fields = body.rejected.map((r: { index: number; field: string }) => [r.index, r.field]);
    expect(fields).toEqual(
      expect.arrayContaining([
        [2, 'tag'],
        [3, 'time'],
        [4, 'value'],
        [4, '(item)'],
      ]),
    );
    // 11:00+01:00 is 10:00Z; 1772359200000 ms is 2026-03-01T10:00:00Z (worked by hand, common practice, no source).
    expect(sink.stored.map((s) => [s.tagId, s.time.toISOString(), s.value, s.quality])).toEqual([
      [1, '2026-03-01T10:00:00.000Z', 42.5, 192],
      [2, '2026-03-01T10:00:00.000Z', 510.2, 64],
    ]);
    const snap = metrics.snapshot();
    expect(snap.samplesTotal).toBe(2);
    expect(snap.lagSeconds).toBe(5);
    expect(renderIngestMetrics([snap])).toContain(
      'isentrope_ingest_samples_total{source="http",kind="http"} 2',
    );
  });

  it('refuses a value too large for the store by index, and stores the item beside it', async () => {
    const before = sink.stored.length;
    const res = await app.inject({
      method: 'POST',
      url: '/ingest/samples',
      headers: auth,
      payload: [
        { tag: 'ST1.PI-100', time: '2026-03-01T10:00:03Z', value: 1.5e308 },
        { tag: 'ST1.PI-100', time: '2026-03-01T10:00:04Z', value: 42.6 },
      ],
    });
    expect(res.statusCode).toBe(200);
    const body = res.json();
    expect(body.accepted).toBe(1);
    expect(body.rejected).toEqual([
      { index: 0, field: 'value', problem: expect.stringContaining('is beyond ±1e+200') },
    ]);
    expect(sink.stored.slice(before).map((s) => s.value)).toEqual([42.6]);
  });

  it('answers 400 for a body that is not an array, 413 beyond maxItems', async () => {
    const obj = await app.inject({
      method: 'POST',
      url: '/ingest/samples',
      headers: auth,
      payload: { tag: 'x' },
    });
    expect(obj.statusCode).toBe(400);
    const many = Array.from({ length: 6 }, (_, i) => ({ tag: 'ST1.PI-100', time: i, value: i }));
    const big = await app.inject({ method: 'POST', url: '/ingest/samples', headers: auth, payload: many });
    expect(big.statusCode).toBe(413);
  });

  it('answers 503 and acknowledges nothing when the store fails', async () => {
    sink.failing = true;
    const before = sink.stored.length;
    const res = await app.inject({
      method: 'POST',
      url: '/ingest/samples',
      headers: auth,
      payload: [{ tag: 'ST1.PI-100', time: '2026-03-01T10:00:02Z', value: 1 }],
    });
    sink.failing = false;
    expect(res.statusCode).toBe(503);
    expect(res.json()).toMatchObject({ code: 'INGEST_WRITE_FAILED' });
    expect(sink.stored.length).toBe(before);
  });
});
