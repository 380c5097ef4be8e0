import { parseArgs } from 'node:util';
import { backfill, JobsError } from '@isentrope/jobs';
import { openDatabase } from '@isentrope/store';
import cliProgress from 'cli-progress';
import type { Logger } from 'pino';
import type { Config } from '../config.js';

export const BACKFILL_USAGE = `Usage: isentrope backfill --from <date> --to <date> [--machine <id or slug>]... [--threads <n>]

Recomputes results for every machine (or the ones named) over [from, to), UTC dates or ISO
instants; writes the same rows the incremental job writes. --threads sets the compute worker
threads (default: one per core, at most 4, for 50,000 machine-points or more; 0 computes on the
main thread).
`;

function instant(name: string, text: string | undefined): number {
  const ms = text === undefined ? Number.NaN : Date.parse(text);
  if (!Number.isFinite(ms))
    throw new JobsError(
      'JOBS_BAD_RANGE',
      `--${name} must be a date such as 2026-01-01, got ${JSON.stringify(text)}`,
      {
        [name]: text,
      },
    );
  return ms;
}

/** `isentrope backfill --from 2026-01-01 --to 2026-02-01 [--machine id]` with a progress bar on stderr. */
export async function backfillCommand(
  config: Config,
  logger: Logger,
  argv: readonly string[],
): Promise<void> {
  const { values } = parseArgs({
    args: [...argv],
    options: {
      from: { type: 'string' },
      to: { type: 'string' },
      machine: { type: 'string', multiple: true },
      threads: { type: 'string' },
    },
    strict: true,
  });
  const from = instant('from', values.from);
  const to = instant('to', values.to);
  const threads = values.threads === undefined ? undefined : Number(values.threads);
  if (threads !== undefined && !(Number.isInteger(threads) && threads >= 0 && threads <= 64))
    throw new JobsError(
      'JOBS_BAD_CONFIG',
      `--threads must be a whole number from 0 to 64, got ${values.threads}`,
      {
        threads: values.threads,
      },
    );
  const db = await openDatabase({
    url: config.databaseUrl,
    dataDir: config.dataDir,
    embeddedPort: config.embeddedPostgresPort,
  });
  try {
    let machineIds: number[] | undefined;
    if (values.machine !== undefined) {
      const res = await db.pool.query<{ id: number; slug: string }>(
        'SELECT id, slug FROM machines WHERE slug = ANY($1::text[]) OR id::text = ANY($1::text[])',
        [values.machine],
      );
      const unknown = values.machine.filter((m) => !res.rows.some((r) => r.slug === m || String(r.id) === m));
      if (unknown.length > 0)
        throw new JobsError('JOBS_NOT_FOUND', `unknown machine ${unknown.join(', ')}`, { machines: unknown });
      machineIds = res.rows.map((r) => r.id);
    }
    const bar = new cliProgress.SingleBar(
      {
        format: 'backfill [{bar}] {percentage}% | {value}/{total} machine-points | eta {eta_formatted}',
        stream: process.stderr,
      },
      cliProgress.Presets.shades_classic,
    );
    let started = false;
    const stats = await backfill(db.pool, {
      from,
      to,
      ...(machineIds !== undefined ? { machineIds } : {}),
      ...(threads !== undefined ? { workers: threads } : {}),
      onProgress: (done, total) => {
        if (!started) {
          bar.start(total, done);
          started = true;
        } else bar.update(done);
      },
    });
    bar.stop();
    logger.info(
      { machines: stats.machines, points: stats.points, ms: stats.ms, threads: stats.workers },
      `backfill done: ${stats.points} machine-points for ${stats.machines} machines in ${(stats.ms / 1000).toFixed(1)} s`,
    );
  } finally {
    await db.close();
  }
}
