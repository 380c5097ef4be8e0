import {
  type Database,
  type DatabaseKind,
  type EmbeddedServer,
  openDatabase,
  startEmbeddedPostgres,
} from '@isentrope/store';
import type { Config } from './config.js';

export interface StartDatabase {
  readonly db: Database;
  readonly kind: DatabaseKind;
  /** The embedded server this process runs; undefined with DATABASE_URL. */
  readonly embedded: EmbeddedServer | undefined;
}

/**
 * The database of `isentrope start`. The embedded server is started here rather than inside
 * openDatabase so that the shutdown holds it apart from the pool: it is stopped even when the
 * pool does not close in time (a part still holding a connection), and on a forced stop.
 */
export async function openStartDatabase(
  config: Pick<Config, 'databaseUrl' | 'dataDir' | 'embeddedPostgresPort'>,
  onEmbeddedLog: (line: string) => void,
): Promise<StartDatabase> {
  if (config.databaseUrl !== undefined) {
    const db = await openDatabase({ url: config.databaseUrl, dataDir: config.dataDir });
    return { db, kind: 'external', embedded: undefined };
  }
  const embedded = await startEmbeddedPostgres({
    dataDir: config.dataDir,
    port: config.embeddedPostgresPort,
    onLog: onEmbeddedLog,
  });
  try {
    const db = await openDatabase({ url: embedded.url, dataDir: config.dataDir });
    return { db, kind: 'embedded', embedded };
  } catch (error) {
    await embedded.stop().catch(() => {});
    throw error;
  }
}
