import { CAUTION } from '@isentrope/monitor';
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { z } from 'zod';
import type { ApiApp } from './app.js';
import { buildTestApp } from './test-support/app.js';

/**
 * The structure of an OpenAPI 3.0 document as far as we use it (OpenAPI Specification 3.0.3,
 * sections 4.7.1 OpenAPI Object, 4.7.8 Paths, 4.7.10 Operation, 4.7.12 Parameter, 4.7.17 Responses).
 */
const schemaObject = z.record(z.string(), z.unknown());
const parameter = z.strictObject({
  name: z.string().min(1),
  in: z.enum(['query', 'header', 'path', 'cookie']),
  required: z.boolean().optional(),
  description: z.string().optional(),
  schema: schemaObject,
});
const response = z.object({
  description: z.string(),
  content: z.record(z.string(), z.object({ schema: schemaObject })).optional(),
});
const operation = z.object({
  summary: z.string().min(1),
  tags: z.array(z.string()).min(1),
  parameters: z.array(parameter).optional(),
  requestBody: z
    .object({
      content: z.record(z.string(), z.object({ schema: schemaObject })),
      required: z.boolean().optional(),
    })
    .optional(),
  responses: z
    .record(z.string().regex(/^([1-5]\d\d|default)$/), response)
    .refine((r) => Object.keys(r).length > 0),
});
const openApiDocument = z.object({
  openapi: z.string().regex(/^3\.0\.\d+$/),
  info: z.object({ title: z.string(), version: z.string() }),
  paths: z.record(
    z.string().startsWith('/'),
    z.partialRecord(z.enum(['get', 'put', 'post', 'delete', 'patch', 'options', 'head']), operation),
  ),
  components: z.object({ securitySchemes: z.record(z.string(), z.object({ type: z.string() })) }).optional(),
});

describe('OpenAPI document', () => {
  let pool: pg.Pool;
  let app: ApiApp;
  beforeAll(async () => {
    // No database is needed to build the document; the first-admin check fails quietly (silent logger).
    pool = new pg.Pool({
      connectionString: 'postgres://nobody@127.0.0.1:1/none',
      connectionTimeoutMillis: 200,
    });
    pool.on('error', () => {});
    app = await buildTestApp(pool);
  });
  afterAll(async () => {
    await app.close();
    await pool.end();
  });

  it('is a valid OpenAPI 3.0 document with every API route in it', async () => {
    const r = await app.inject({ method: 'GET', url: '/api/openapi.json' });
    expect(r.statusCode).toBe(200);
    const doc = openApiDocument.parse(r.json());
    const paths = Object.keys(doc.paths);
    for (const p of [
      '/api/fleet',
      '/api/machines/{id}/trend',
      '/api/machines/{id}/hs-chart',
      '/api/alerts/{id}/acknowledge',
      '/api/exports',
      '/api/exports/{id}/download',
      '/api/quarantine',
      '/api/health',
      '/api/tags/{id}/trend',
      '/api/machines/{id}/drift',
      '/api/machines/{id}/baselines',
    ])
      expect(paths).toContain(p);
    // Path parameters are declared for every {name} in the path (OAS 3.0.3 4.7.12: required for path).
    for (const [path, ops] of Object.entries(doc.paths))
      for (const op of Object.values(ops)) {
        const names = [...path.matchAll(/\{(\w+)\}/g)].map((m) => m[1]);
        const declared = (op.parameters ?? []).filter((p) => p.in === 'path');
        expect(declared.map((p) => p.name).sort()).toEqual(names.sort());
        for (const d of declared) expect(d.required).toBe(true);
      }
  });

  it('has a schema on every API route', () => {
    expect(app.unschemedRoutes).toEqual([]);
  });

  it('serves the interactive page', async () => {
    const r = await app.inject({ method: 'GET', url: '/api/docs/' });
    expect(r.statusCode).toBe(200);
    expect(r.headers['content-type']).toMatch(/text\/html/);
  });

  it('puts the caution on the interactive page (the document description)', async () => {
    const r = await app.inject({ method: 'GET', url: '/api/openapi.json' });
    expect(r.json<{ info: { description: string } }>().info.description).toContain(CAUTION);
  });

  it('opens the machine page from the links alerts carry (/machines/<slug>?from&to)', async () => {
    // The form services/jobs trendLink writes into evidence and notifications: ISO times, percent-encoded.
    const r = await app.inject({
      method: 'GET',
      url: '/machines/ac-1?from=2026-12-01T02%3A13%3A00.000Z&to=2026-12-01T03%3A13%3A00.000Z',
    });
    expect(r.statusCode).toBe(302);
    expect(r.headers.location).toBe(
      '/machine.html?slug=ac-1&from=2026-12-01T02%3A13%3A00.000Z&to=2026-12-01T03%3A13%3A00.000Z',
    );
    const bare = await app.inject({ method: 'GET', url: '/machines/st%201' });
    expect(bare.headers.location).toBe('/machine.html?slug=st+1');
  });
});

describe('rate limit', () => {
  it('answers 429 with API_RATE_LIMITED and Retry-After once a client passes the limit', async () => {
    const pool = new pg.Pool({
      connectionString: 'postgres://nobody@127.0.0.1:1/none',
      connectionTimeoutMillis: 200,
    });
    pool.on('error', () => {});
    const app = await buildTestApp(pool, { rateLimit: { max: 3, timeWindowMs: 60_000 } });
    try {
      const codes: number[] = [];
      for (let i = 0; i < 4; i++)
        codes.push((await app.inject({ method: 'GET', url: '/api/openapi.json' })).statusCode);
      expect(codes).toEqual([200, 200, 200, 429]);
      const r = await app.inject({ method: 'GET', url: '/api/openapi.json' });
      expect(r.headers['content-type']).toMatch(/^application\/problem\+json/);
      expect(r.json<{ code: string }>().code).toBe('API_RATE_LIMITED');
      expect(Number(r.headers['retry-after'])).toBeGreaterThan(0);
    } finally {
      await app.close();
      await pool.end();
    }
  });
});
