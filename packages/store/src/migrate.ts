import { fileURLToPath } from 'node:url';
import { runner } from 'node-pg-migrate';
import type pg from 'pg';
import type { StoreErrorCode } from './errors.js';

/** The repository's migrations folder: plain numbered SQL files. */
export const MIGRATIONS_DIR = fileURLToPath(new URL('../../../migrations', import.meta.url));
export const MIGRATIONS_TABLE = 'schema_migrations';

export interface MigrationReport {
  /** Migrations applied by this call, in order. */
  readonly applied: readonly string[];
  /** Name of the newest applied migration, or undefined on an empty schema. */
  readonly level: string | undefined;
}

/** A migration failed: the file and the database's own message, so the fix is obvious. */
export class MigrationError extends Error {
  readonly code: StoreErrorCode = 'STORE_MIGRATION_FAILED';
  constructor(
    readonly migration: string | undefined,
    readonly databaseMessage: string,
  ) {
    super(
      `Migration ${migration ?? '(unknown file)'} failed and was rolled back: ${databaseMessage}. ` +
        `Fix the SQL in migrations/ (or the database state) and start again.`,
    );
    this.name = 'MigrationError';
  }
}

interface MigrationLogger {
  info(message: string): void;
}

/**
 * Applies every pending migration in name order, each in its own transaction, under
 * node-pg-migrate's advisory lock so that several instances starting at once apply them
 * only once.
 */
export async function migrate(
  databaseUrl: string,
  options: { dir?: string; logger?: MigrationLogger } = {},
): Promise<MigrationReport> {
  let current: string | undefined;
  const logger = options.logger;
  try {
    const applied = await runner({
      databaseUrl,
      dir: options.dir ?? MIGRATIONS_DIR,
      migrationsTable: MIGRATIONS_TABLE,
      direction: 'up',
      checkOrder: true,
      singleTransaction: false,
      verbose: false,
      advisoryLockMode: 'wait',
      logger: {
        debug: () => {},
        info: (message: string) => {
          const match = /MIGRATION (\S+) \(UP\)/.exec(message);
          if (match?.[1] !== undefined) current = match[1];
        },
        warn: (message: string) => logger?.info(message),
        error: () => {},
      },
    });
    for (const m of applied) logger?.info(`applied migration ${m.name}`);
    const names = applied.map((m) => m.name);
    return { applied: names, level: names.at(-1) };
  } catch (error) {
    const message = error instanceof Error ? error.message : String(error);
    throw new MigrationError(current, message);
  }
}

/** The newest applied migration and how many are applied. */
export async function migrationLevel(pool: pg.Pool): Promise<{ level: string | undefined; count: number }> {
  const exists = await pool.query<{ present: boolean }>(`SELECT to_regclass($1) IS NOT NULL AS present`, [
    MIGRATIONS_TABLE,
  ]);
  if (exists.rows[0]?.present !== true) return { level: undefined, count: 0 };
  const result = await pool.query<{ name: string; count: string }>(
    `SELECT name, count(*) OVER () AS count FROM ${MIGRATIONS_TABLE} ORDER BY run_on DESC, id DESC LIMIT 1`,
  );
  const row = result.rows[0];
  return { level: row?.name, count: row === undefined ? 0 : Number(row.count) };
}
