import { migrate, migrationLevel, openDatabase } from '@isentrope/store';
import type { Logger } from 'pino';
import type { Config } from '../config.js';

/** `isentrope migrate`: apply pending migrations and say the level reached. */
export async function migrateCommand(config: Config, logger: Logger): Promise<void> {
  const db = await openDatabase({
    url: config.databaseUrl,
    dataDir: config.dataDir,
    embeddedPort: config.embeddedPostgresPort,
  });
  try {
    const report = await migrate(db.url, { logger: { info: (message) => logger.info(message) } });
    const level = await migrationLevel(db.pool);
    logger.info(
      { kind: db.kind, applied: report.applied, level: level.level, count: level.count },
      `database at migration ${level.level ?? '(none)'} (${level.count} applied)`,
    );
  } finally {
    await db.close();
  }
}
