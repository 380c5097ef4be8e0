/**
 * Part 4: two, then three Isentrope processes against one database (their own, on the
 * suite's cluster): each scheduled tick runs once, and each alert notification reaches the
 * suite's webhook receiver on 127.0.0.1 once.
 */
import { createServer, type Server } from 'node:http';
import { join } from 'node:path';
import pg from 'pg';
import { freePort } from '../../../packages/store/src/embedded.js';
import { IsentropeProcess, runCli } from './isentrope.js';
import { sleep } from './random.js';
import { table, type Verdict } from './report.js';
import { runAsUser, type World } from './world.js';

interface Receiver {
  readonly url: string;
  readonly byEvent: Map<number, number>;
  close(): Promise<void>;
}

async function receiver(): Promise<Receiver> {
  const byEvent = new Map<number, number>();
  const server: Server = createServer((req, res) => {
    let body = '';
    req.on('data', (c: Buffer) => (body += c.toString()));
    req.on('end', () => {
      try {
        const id = (JSON.parse(body) as { event?: { id?: number } }).event?.id ?? -1;
        byEvent.set(id, (byEvent.get(id) ?? 0) + 1);
      } catch {
        byEvent.set(-1, (byEvent.get(-1) ?? 0) + 1);
      }
      res.writeHead(204).end();
    });
  });
  const port = await freePort();
  await new Promise<void>((resolve) => server.listen(port, '127.0.0.1', resolve));
  return {
    url: `http://127.0.0.1:${port}/hook`,
    byEvent,
    close: () => new Promise((resolve) => server.close(() => resolve())),
  };
}

interface Round {
  processes: number;
  events: number;
  received: number;
  eventsTwice: number;
  eventsMissing: number;
  ticks: number;
  ticksTwice: number;
  ticksMissed: number;
  earlyNotified: boolean;
}

/** The ticks of each job in [from, to): counted runs per tick (ok or failed), and 10 s ticks with none. */
async function ticks(
  pool: pg.Pool,
  from: number,
  to: number,
): Promise<{ ticks: number; twice: number; missed: number }> {
  const r = await pool.query<{ job: string; tick: number; n: number }>(
    `SELECT job, (stats->>'tick')::float8 AS tick, count(*) FILTER (WHERE status IN ('ok', 'failed'))::int AS n
       FROM job_runs WHERE (stats->>'tick')::float8 >= $1 AND (stats->>'tick')::float8 < $2 GROUP BY 1, 2`,
    [from, to],
  );
  const seen = new Set(r.rows.filter((x) => x.job === 'notifications').map((x) => x.tick));
  let missed = 0;
  for (let t = Math.ceil(from / 10_000) * 10_000; t < to; t += 10_000) if (!seen.has(t)) missed++;
  return { ticks: r.rows.length, twice: r.rows.filter((x) => x.n > 1).length, missed };
}

async function round(
  world: World,
  url: string,
  n: number,
  seconds: number,
  hook: Receiver,
  say: (l: string) => void,
): Promise<Round> {
  const env = {
    ...world.env,
    DATABASE_URL: url,
    ISENTROPE_INGEST: 'off',
    ISENTROPE_WEBHOOK_URL: hook.url,
    ISENTROPE_WEBHOOK_SECRET: 'faults-suite-webhook-secret',
  };
  const apps: IsentropeProcess[] = [];
  for (let i = 0; i < n; i++)
    apps.push(
      new IsentropeProcess({
        env,
        logFile: join(world.dir, `multi-${n}-${i}.log`),
        port: await freePort(),
        user: runAsUser(),
      }),
    );
  const pool = new pg.Pool({ connectionString: url, max: 2 });
  try {
    await Promise.all(apps.map((a) => a.startUntilHealthy()));
    const from = Date.now() + 10_000;
    const machine = await pool.query<{ id: number }>(`SELECT id FROM machines ORDER BY id LIMIT 1`);
    const alert = await pool.query<{ id: number }>(
      // Each round its own tag: at most one open alert per machine, category and tag.
      `INSERT INTO alerts (machine_id, category, tag_id, level, severity, state, message, raised_at) VALUES ($1, 'instrument', (SELECT min(id) + $2 FROM tags), 'alarm', 'high', 'active_unacknowledged', 'INVENTED alert of the faults suite (${n} processes)', now()) RETURNING id::int`,
      [machine.rows[0]?.id, n],
    );
    // One event at once after start (finding F3: before the first notifications tick there is no target row).
    const early = await pool.query<{ id: number }>(
      `INSERT INTO alert_events (alert_id, from_state, to_state, actor, note) VALUES ($1, 'normal', 'active_unacknowledged', 'system', 'INVENTED event at start') RETURNING id::int`,
      [alert.rows[0]?.id],
    );
    const earlyId = early.rows[0]?.id ?? 0;
    for (let i = 0; i < 30; i++) {
      const t = await pool.query(`SELECT 1 FROM notifications WHERE name = 'config-webhook' AND enabled`);
      if (t.rows.length > 0) break;
      await sleep(1000);
    }
    const ids: number[] = [];
    const end = Date.now() + seconds * 1000;
    // Events during the first half; the second half lets the outbox drain (a tick every 10 s).
    while (Date.now() < end - (seconds * 1000) / 2) {
      for (let k = 0; k < 5; k++) {
        const e = await pool.query<{ id: number }>(
          `INSERT INTO alert_events (alert_id, from_state, to_state, actor, note) VALUES ($1, 'normal', 'active_unacknowledged', 'system', 'INVENTED event') RETURNING id::int`,
          [alert.rows[0]?.id],
        );
        ids.push(e.rows[0]?.id ?? 0);
      }
      await sleep(2000);
    }
    while (Date.now() < end) {
      const pending = await pool.query<{ n: number }>(
        `SELECT count(*)::int AS n FROM deliveries WHERE status = 'pending'`,
      );
      if ((pending.rows[0]?.n ?? 0) === 0 && Date.now() > end - 10_000) break;
      await sleep(1000);
    }
    const t = await ticks(pool, from, Date.now() - 2_000);
    const left = await pool.query<{ status: string; n: number; err: string | null }>(
      `SELECT status, count(*)::int AS n, max(last_error) AS err FROM deliveries WHERE status <> 'sent' GROUP BY 1`,
    );
    for (const row of left.rows)
      say(`  ${n} processes: ${row.n} deliveries ${row.status}${row.err === null ? '' : ` (${row.err})`}`);
    const counts = ids.map((id) => hook.byEvent.get(id) ?? 0);
    return {
      processes: n,
      events: ids.length,
      received: counts.reduce((a, c) => a + c, 0),
      eventsTwice: counts.filter((c) => c > 1).length,
      eventsMissing: counts.filter((c) => c === 0).length,
      earlyNotified: (hook.byEvent.get(earlyId) ?? 0) > 0,
      ticks: t.ticks,
      ticksTwice: t.twice,
      ticksMissed: t.missed,
    };
  } finally {
    await Promise.all(apps.map((a) => a.stop()));
    for (const a of apps) a.close();
    await pool.end();
  }
}

export async function multiPart(
  world: World,
  plantPath: string,
  short: boolean,
  say: (l: string) => void,
): Promise<{ verdicts: Verdict[]; figures: Record<string, number> }> {
  const admin = new pg.Client({ connectionString: world.cluster.url });
  await admin.connect();
  await admin.query('CREATE DATABASE faults_multi');
  await admin.end();
  const url = world.cluster.url.replace(/\/postgres$/, '/faults_multi');
  for (const args of [['migrate'], ['plant', 'load', plantPath]]) {
    const r = await runCli(args, { ...world.env, DATABASE_URL: url });
    if (r.code !== 0) throw new Error(`isentrope ${args.join(' ')} on faults_multi failed:\n${r.output}`);
  }
  const hook = await receiver();
  const seconds = short ? 30 : 130;
  say(`\nseveral processes: 2, then 3, on one database, ${seconds} s each`);
  const rounds: Round[] = [];
  try {
    for (const n of short ? [2] : [2, 3]) rounds.push(await round(world, url, n, seconds, hook, say));
  } finally {
    await hook.close();
  }
  say(
    table(
      [
        'processes',
        'ticks',
        'ticks run twice',
        '10 s ticks missed',
        'events',
        'webhook calls',
        'events sent twice',
        'events not sent',
      ],
      rounds.map((r) => [
        r.processes,
        r.ticks,
        r.ticksTwice,
        r.ticksMissed,
        r.events,
        r.received,
        r.eventsTwice,
        r.eventsMissing,
      ]),
    ),
  );
  const verdicts: Verdict[] = rounds.flatMap((r) => [
    {
      part: 'processes',
      target: `${r.processes} processes: each tick runs once`,
      ok: r.ticksTwice === 0 && r.ticksMissed === 0 && r.ticks > 0,
      detail: `${r.ticks} ticks, ${r.ticksTwice} twice, ${r.ticksMissed} missed`,
    },
    {
      part: 'processes',
      target: `${r.processes} processes: each notification sent once`,
      ok: r.eventsTwice === 0 && r.eventsMissing === 0 && r.events > 0,
      detail: `${r.events} events, ${r.received} calls, ${r.eventsTwice} twice, ${r.eventsMissing} not sent`,
    },
    {
      part: 'processes',
      target: `${r.processes} processes: an alert event right after start is notified`,
      ok: r.earlyNotified,
      detail: r.earlyNotified ? 'sent' : 'never sent',
    },
  ]);
  return { verdicts, figures: { rounds: rounds.length } };
}
