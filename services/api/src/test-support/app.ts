import type pg from 'pg';
import { pino } from 'pino';
import { type ApiApp, type ApiDependencies, buildApp } from '../app.js';

/** The app on a test pool, logging nothing. */
export async function buildTestApp(pool: pg.Pool, extra: Partial<ApiDependencies> = {}): Promise<ApiApp> {
  const app = await buildApp({
    pool,
    database: { kind: 'external', displayUrl: 'postgres://test' },
    logger: pino({ level: 'silent' }),
    version: '0.0.0-test',
    startedAt: Date.now(),
    adminPassword: 'initial-admin-password',
    ...extra,
  });
  await app.ready();
  return app;
}

/** POST /api/exports with a bearer token, as the dashboard's export page does. */
export function postExport(app: ApiApp, token: string, payload: Record<string, unknown>) {
  return app.inject({
    method: 'POST',
    url: '/api/exports',
    headers: { authorization: `Bearer ${token}` },
    payload,
  });
}
