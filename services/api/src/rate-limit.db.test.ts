/**
 * The API's own 429 (app-wide @fastify/rate-limit): Retry-After in seconds to the end of the
 * client's window, as RFC 9110 section 10.2.3 defines it (delay-seconds), and the problem's
 * detail saying the same number.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../test/support/database.js';
import type { ApiApp } from './app.js';
import { buildTestApp } from './test-support/app.js';

const WINDOW_MS = 90_000;
let db: TestDatabase;
let app: ApiApp;

beforeAll(async () => {
  db = await createTestDatabase();
  app = await buildTestApp(db.pool, { rateLimit: { max: 2, timeWindowMs: WINDOW_MS } });
});
afterAll(async () => {
  await app?.close();
  await db?.drop();
});

describe('the API rate limit', () => {
  it('answers the request past the limit with Retry-After = seconds to the window end, at least 1', async () => {
    const started = Date.now();
    const get = () => app.inject({ method: 'GET', url: '/api/health', remoteAddress: '10.9.0.1' });
    expect((await get()).statusCode).toBe(200);
    expect((await get()).statusCode).toBe(200);
    const limited = await get();
    expect(limited.statusCode).toBe(429);
    // The window opened at the first request (the plugin's local store; common practice, no source).
    const toEnd = (started + WINDOW_MS - Date.now()) / 1000;
    const retryAfter = Number(limited.headers['retry-after']);
    expect(Number.isInteger(retryAfter)).toBe(true);
    expect(retryAfter).toBeGreaterThanOrEqual(1);
    expect(Math.abs(retryAfter - toEnd)).toBeLessThanOrEqual(1);
    const problem = limited.json<{ code: string; detail: string }>();
    expect(problem.code).toBe('API_RATE_LIMITED');
    expect(problem.detail).toBe(`Rate limit of 2 requests per 90 s reached; retry in ${retryAfter} s.`);
  });
});
