import pg from 'pg';
import { type EmbeddedServer, startEmbeddedPostgres } from './embedded.js';
import type { StoreErrorCode } from './errors.js';

/** Where the data lives: a PostgreSQL the operator runs, or the one this process runs. */
export type DatabaseKind = 'external' | 'embedded';

export interface Database {
  readonly kind: DatabaseKind;
  readonly pool: pg.Pool;
  /** Connection string (with any password) for tools that open their own connection. */
  readonly url: string;
  /** The same, safe to log and show. */
  readonly displayUrl: string;
  close(): Promise<void>;
}

export interface OpenDatabaseOptions {
  /** DATABASE_URL; when undefined an embedded PostgreSQL is started in dataDir. */
  url?: string | undefined;
  /** Folder for the embedded cluster. */
  dataDir: string;
  /** Port for the embedded server; 0 picks a free one. */
  embeddedPort?: number;
  poolSize?: number;
  onEmbeddedLog?: (line: string) => void;
}

// Timestamps are always handled in UTC; numeric (int8) ids come back as numbers, since
// ids stay far below 2^53.
pg.types.setTypeParser(pg.types.builtins.INT8, (value: string) => Number(value));

export function redactUrl(url: string): string {
  try {
    const parsed = new URL(url);
    if (parsed.password !== '') parsed.password = '***';
    return parsed.toString();
  } catch {
    return '(unparseable connection string)';
  }
}

/** One database code path: the `pg` driver on either kind of server. */
export async function openDatabase(options: OpenDatabaseOptions): Promise<Database> {
  let embedded: EmbeddedServer | undefined;
  let url = options.url;
  if (url === undefined) {
    embedded = await startEmbeddedPostgres({
      dataDir: options.dataDir,
      port: options.embeddedPort ?? 0,
      ...(options.onEmbeddedLog === undefined ? {} : { onLog: options.onEmbeddedLog }),
    });
    url = embedded.url;
  }
  const pool = new pg.Pool({
    connectionString: url,
    max: options.poolSize ?? 10,
    application_name: 'isentrope',
  });
  // An idle client losing its server (a restart) must not crash the process; the next
  // query gets a fresh connection.
  pool.on('error', () => {});
  try {
    await pool.query('SELECT 1');
  } catch (error) {
    await pool.end().catch(() => {});
    await embedded?.stop().catch(() => {});
    const message = error instanceof Error ? error.message : String(error);
    throw new DatabaseUnreachableError(redactUrl(url), message);
  }
  let closed = false;
  return {
    kind: embedded === undefined ? 'external' : 'embedded',
    pool,
    url,
    displayUrl: redactUrl(url),
    async close() {
      if (closed) return;
      closed = true;
      await pool.end();
      await embedded?.stop();
    },
  };
}

export class DatabaseUnreachableError extends Error {
  readonly code: StoreErrorCode = 'STORE_DATABASE_UNREACHABLE';
  constructor(
    readonly url: string,
    readonly reason: string,
  ) {
    super(
      `Cannot reach the database at ${url}: ${reason}. Check DATABASE_URL, or leave it unset to use the embedded PostgreSQL.`,
    );
    this.name = 'DatabaseUnreachableError';
  }
}
