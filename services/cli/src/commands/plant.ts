import { loadPlantFile } from '@isentrope/plant';
import { applyPlant, migrate, openDatabase } from '@isentrope/store';
import type { Logger } from 'pino';
import type { Config } from '../config.js';

/**
 * `isentrope plant load <file>`: validate a plant file and upsert its site, machines, tags,
 * bands and sources (audited). `isentrope plant check <file>`: validate only.
 */
export async function plantCommand(args: readonly string[], config: Config, logger: Logger): Promise<number> {
  const [action, file] = args;
  if ((action !== 'load' && action !== 'check') || file === undefined) {
    process.stderr.write(
      'usage: isentrope plant load <plant.yaml>\n       isentrope plant check <plant.yaml>\n',
    );
    return 2;
  }
  const plant = await loadPlantFile(file);
  const summary = { site: plant.site.id, machines: plant.machines.length, tags: plant.tags.length };
  if (action === 'check') {
    logger.info(summary, `${file} is a valid plant file`);
    return 0;
  }
  const db = await openDatabase({
    url: config.databaseUrl,
    dataDir: config.dataDir,
    embeddedPort: config.embeddedPostgresPort,
  });
  try {
    await migrate(db.url);
    const applied = await applyPlant(db.pool, plant, `cli:${process.env.USER ?? 'unknown'}`);
    logger.info(
      { ...summary, retiredMachines: applied.retiredMachines, retiredTags: applied.retiredTags },
      `loaded ${file} into the ${db.kind} database`,
    );
    return 0;
  } finally {
    await db.close();
  }
}
