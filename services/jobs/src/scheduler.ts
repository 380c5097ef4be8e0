/**
 * Scheduling: node-cron fires the ticks; each tick of each job runs once across every instance.
 * A tick takes a PostgreSQL session advisory lock on a connection dedicated to its job
 * (pg_try_advisory_lock; an instance that does not get it skips), then checks job_runs for a run
 * of the same job and tick time (a second instance whose clock lags must not redo the tick), records
 * its run, calls the job and records the outcome. The tick only calls the job and logs a failure.
 */
import { randomUUID } from 'node:crypto';
import cron from 'node-cron';
import pg from 'pg';
import type { Logger } from 'pino';
import { type AnalysisJobsConfig, analysisJobBodies, ensureTargetsOfConfig } from './alerts/bodies.js';
import { type ComputeJobOptions, runComputeOnce } from './compute/job.js';
import { type PackJobOptions, runPackOnce } from './pack/job.js';

export type JobName = 'compute' | 'alerts' | 'notifications' | 'monthly' | 'retention' | 'pack';

export interface JobsConfig extends AnalysisJobsConfig {
  readonly compute?: ComputeJobOptions;
  /** The pack job (raw samples into compressed blocks); packs by default. */
  readonly pack?: PackJobOptions;
}

export interface JobsDeps {
  readonly pool: pg.Pool;
  readonly databaseUrl: string;
  readonly logger: Logger;
  /** Now [ms]; default Date.now. */
  readonly clock?: () => number;
  readonly config: JobsConfig;
  /** Job bodies; the defaults: compute, alerts (analysis then alerts), notifications, and monthly when config.monthly is set. */
  readonly jobs?: Partial<Record<JobName, (tickMs: number) => Promise<unknown>>>;
  /** Do not start node-cron (tests drive runTick themselves). */
  readonly manual?: boolean;
}

export type TickOutcome = 'ran' | 'failed' | 'locked' | 'done-elsewhere' | 'no-job';

export interface JobsService {
  readonly instance: string;
  /** Run one tick of a job at tick time tickMs (once across instances). */
  runTick(job: JobName, tickMs: number): Promise<TickOutcome>;
  /** Stop the schedules and wait for running ticks. */
  stop(): Promise<void>;
}

/** Cron expressions (second-resolution where node-cron allows it). */
export const SCHEDULES: Readonly<Record<JobName, string>> = {
  compute: '0 * * * * *', // every minute, at second 0
  alerts: '20 * * * * *', // every minute, after compute
  notifications: '*/10 * * * * *', // every 10 s
  // Hourly: the job itself exports each site's month once it has ended in the site's zone
  // plus the settle time (sites may be in several zones, offsets in half and quarter hours).
  monthly: '0 0 * * * *',
  retention: '0 30 3 * * *', // daily
  pack: '0 15 * * * *', // hourly: whole UTC days older than the pack age
};

/** The tick time a firing belongs to: the start of its period [ms]. */
export function tickTime(job: JobName, nowMs: number): number {
  const period = job === 'notifications' ? 10_000 : 60_000;
  return Math.floor(nowMs / period) * period;
}

/** A stable 32-bit key per job for pg_try_advisory_lock(int, int). */
// Not 0x15e7: that class is the sample writer's per-tag locks (TAG_LOCK_CLASS, keyed by tag id),
// and a tick holding (0x15e7, 1) for its whole run blocked every writer of tag 1.
const LOCK_CLASS = 0x15e9; // "isentrope jobs"
const LOCK_KEYS: Readonly<Record<JobName, number>> = {
  compute: 1,
  alerts: 2,
  notifications: 3,
  monthly: 4,
  retention: 5,
  pack: 6,
};

type JobBody = (tickMs: number) => Promise<unknown>;

function jobBodies(deps: JobsDeps, log: Logger): Partial<Record<JobName, JobBody>> {
  return {
    compute: (tickMs) =>
      runComputeOnce(deps.pool, {
        ...deps.config.compute,
        nowMs: tickMs,
        onMachineError: (machineId, err) => log.error({ err, machineId }, 'compute failed for a machine'),
      }),
    pack: (tickMs) => runPackOnce(deps.pool, { ...deps.config.pack, nowMs: tickMs, logger: log }),
    ...analysisJobBodies({ pool: deps.pool, config: deps.config, logger: log }),
    ...deps.jobs,
  };
}

/** One database connection per job, kept for its session advisory lock; dropped when it fails. */
class LockConnections {
  private readonly connections = new Map<JobName, pg.Client>();
  constructor(
    private readonly databaseUrl: string,
    private readonly log: Logger,
  ) {}

  async get(job: JobName): Promise<pg.Client> {
    let c = this.connections.get(job);
    if (c === undefined) {
      c = new pg.Client({ connectionString: this.databaseUrl, application_name: `isentrope-jobs-${job}` });
      c.on('error', (err) => {
        this.log.error({ err, job }, 'lock connection lost');
        this.connections.delete(job);
      });
      await c.connect();
      this.connections.set(job, c);
    }
    return c;
  }

  async closeAll(): Promise<void> {
    for (const c of this.connections.values()) await c.end().catch(() => {});
    this.connections.clear();
  }
}

/** Runs a job's body under its job_runs record, once the caller holds the job's lock. */
async function runRecorded(
  c: pg.Client,
  run: { job: JobName; tickMs: number; instance: string; body: JobBody; log: Logger },
): Promise<TickOutcome> {
  const { job, tickMs } = run;
  const done = await c.query(
    `SELECT 1 FROM job_runs WHERE job = $1 AND (stats->>'tick')::float8 = $2 AND status IN ('ok', 'failed') LIMIT 1`,
    [job, tickMs],
  );
  if (done.rows.length > 0) return 'done-elsewhere';
  const inserted = await c.query<{ id: number }>(
    `INSERT INTO job_runs (job, instance, stats) VALUES ($1, $2, jsonb_build_object('tick', $3::float8)) RETURNING id`,
    [job, run.instance, tickMs],
  );
  const id = inserted.rows[0]?.id;
  try {
    const result = await run.body(tickMs);
    await c.query(
      `UPDATE job_runs SET status = 'ok', finished_at = now(), stats = stats || $2::jsonb WHERE id = $1`,
      [id, JSON.stringify({ result: result ?? null })],
    );
    return 'ran';
  } catch (err) {
    run.log.error({ err, job, tickMs }, 'job failed');
    await c.query(`UPDATE job_runs SET status = 'failed', finished_at = now(), error = $2 WHERE id = $1`, [
      id,
      err instanceof Error ? err.message : String(err),
    ]);
    return 'failed';
  }
}

/** node-cron schedules for every job that has a body; node-cron's own log goes through ours. */
function scheduleTicks(
  bodies: Partial<Record<JobName, JobBody>>,
  fire: (job: JobName) => Promise<unknown>,
  log: Logger,
): { stop: () => void | Promise<void> }[] {
  cron.setLogger({
    info: (m) => log.debug({ cron: m }, 'node-cron'),
    warn: (m) => log.warn({ cron: m }, 'node-cron'),
    error: (m, err) => log.error({ err: err ?? m }, 'node-cron'),
    debug: (m) => log.trace({ cron: String(m) }, 'node-cron'),
  });
  const tasks: { stop: () => void | Promise<void> }[] = [];
  for (const job of Object.keys(SCHEDULES) as JobName[]) {
    if (bodies[job] === undefined) continue;
    tasks.push(
      cron.schedule(SCHEDULES[job], async () => void (await fire(job)), {
        noOverlap: true,
        name: `isentrope-${job}`,
      }),
    );
  }
  return tasks;
}

export async function startJobs(deps: JobsDeps): Promise<JobsService> {
  const instance = randomUUID();
  const log = deps.logger.child({ module: 'jobs', instance });
  const clock = deps.clock ?? Date.now;
  const bodies = jobBodies(deps, log);
  const locks = new LockConnections(deps.databaseUrl, log);
  const running = new Set<Promise<unknown>>();
  let stopped = false;
  // Before any alert can be raised here; when the database is not there yet, the first
  // notifications tick makes them instead.
  if (deps.jobs?.notifications === undefined)
    await ensureTargetsOfConfig(deps.pool, deps.config).catch((err: unknown) =>
      log.warn({ err }, 'configured notification targets not made at start; the notifications tick will'),
    );

  const tick = async (job: JobName, tickMs: number): Promise<TickOutcome> => {
    const body = bodies[job];
    if (body === undefined) return 'no-job';
    const c = await locks.get(job);
    const got = await c.query<{ ok: boolean }>('SELECT pg_try_advisory_lock($1, $2) AS ok', [
      LOCK_CLASS,
      LOCK_KEYS[job],
    ]);
    if (got.rows[0]?.ok !== true) return 'locked';
    try {
      return await runRecorded(c, { job, tickMs, instance, body, log });
    } finally {
      await c.query('SELECT pg_advisory_unlock($1, $2)', [LOCK_CLASS, LOCK_KEYS[job]]);
    }
  };

  const runTick = (job: JobName, tickMs: number): Promise<TickOutcome> => {
    const p = tick(job, tickMs).catch((err: unknown) => {
      log.error({ err, job }, 'tick failed');
      return 'failed' as const;
    });
    running.add(p);
    void p.finally(() => running.delete(p));
    return p;
  };

  let tasks: { stop: () => void | Promise<void> }[] = [];
  if (deps.manual !== true) {
    tasks = scheduleTicks(bodies, async (job) => !stopped && runTick(job, tickTime(job, clock())), log);
    // Work missed while no instance ran: compute and alerts catch up through their watermarks.
    if (bodies.compute !== undefined) void runTick('compute', tickTime('compute', clock()));
  }

  return {
    instance,
    runTick,
    async stop() {
      stopped = true;
      for (const t of tasks) await t.stop();
      await Promise.allSettled([...running]);
      await locks.closeAll();
    },
  };
}
