import { type ChildProcess, spawn } from 'node:child_process';
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../../test/support/database.js';
import { seedTags } from '../testing/seed.js';

const CHILD = join(import.meta.dirname, '../testing/ingest-child.ts');
const ROWS = 150_000;

let db: TestDatabase;
let dir: string;

beforeAll(async () => {
  db = await createTestDatabase();
  await seedTags(db.pool);
  dir = await mkdtemp(join(tmpdir(), 'ingest-kill-'));
});
afterAll(async () => {
  await db?.drop();
  if (dir !== undefined) await rm(dir, { recursive: true, force: true });
});

let lastStderr = '';
function run(file: string, onLine: (line: string, child: ChildProcess) => void): Promise<number | null> {
  return new Promise((resolve, reject) => {
    const child = // One process (node with the tsx loader), so that SIGKILL kills the ingest itself; the tsx
      // command line would run the script in a grandchild that outlives the kill.
      spawn(process.execPath, ['--import', 'tsx', CHILD, db.url, file, 'demo'], {
        stdio: ['ignore', 'pipe', 'pipe'],
      });
    let buf = '';
    child.stdout!.on('data', (d: Buffer) => {
      buf += d.toString();
      let nl = buf.indexOf('\n');
      while (nl !== -1) {
        onLine(buf.slice(0, nl), child);
        buf = buf.slice(nl + 1);
        nl = buf.indexOf('\n');
      }
    });
    lastStderr = '';
    child.stderr!.on('data', (d: Buffer) => {
      lastStderr += d.toString();
    });
    child.on('error', reject);
    child.on('exit', (code) => resolve(code));
  });
}

describe('SIGKILL in the middle of a large CSV, then a restart', () => {
  it('stores every row exactly once and quarantines each bad row once', async () => {
    const file = join(dir, 'big.csv');
    const lines = ['time,ST1.PI-100,ST1.TI-100,ST1.FI-100'];
    const t0 = Date.UTC(2026, 0, 1);
    for (let i = 0; i < ROWS; i++) {
      const time = new Date(t0 + i * 1000).toISOString();
      // Two bad rows (invented), so that the quarantine is checked for repeats too.
      if (i === 10 || i === ROWS - 10) lines.push(`${time},x,1,2`);
      else lines.push(`${time},${(40 + (i % 100) / 100).toFixed(2)},${500 + (i % 7)},${100 + (i % 13)}`);
    }
    await writeFile(file, `${lines.join('\n')}\n`);

    let seenAtKill = 0;
    const killedCode = await run(file, (line, child) => {
      const msg = JSON.parse(line) as { samples?: number };
      if (msg.samples !== undefined && msg.samples >= 50_000 && seenAtKill === 0) {
        seenAtKill = msg.samples;
        child.kill('SIGKILL');
      }
    });
    expect(killedCode).toBeNull(); // killed by a signal
    expect(seenAtKill).toBeGreaterThan(0);
    const mid = await db.pool.query<{ n: number; status: string }>(
      `SELECT (SELECT count(*)::int FROM samples) AS n, (SELECT status FROM ingested_files) AS status`,
    );
    expect(mid.rows[0]!.status).toBe('processing');
    expect(mid.rows[0]!.n).toBeLessThan(ROWS * 3 - 2);

    let finalStatus = '';
    const code = await run(file, (line) => {
      const msg = JSON.parse(line) as { status?: string };
      if (msg.status !== undefined) finalStatus = msg.status;
    });
    expect(code, lastStderr).toBe(0);
    expect(finalStatus).toBe('done');
    // Expected counts by construction: 3 tags per row, minus the two bad cells (common practice, no source).
    const after = await db.pool.query<{ n: number; keys: number }>(
      'SELECT count(*)::int AS n, count(DISTINCT (tag_id, time))::int AS keys FROM samples',
    );
    expect(after.rows[0]).toEqual({ n: ROWS * 3 - 2, keys: ROWS * 3 - 2 });
    const q = await db.pool.query<{ line: number }>('SELECT line FROM quarantine ORDER BY line');
    expect(q.rows.map((r) => r.line)).toEqual([12, ROWS - 8]);
    const f = await db.pool.query('SELECT status, rows_total, rows_quarantined FROM ingested_files');
    expect(f.rows).toEqual([{ status: 'done', rows_total: ROWS, rows_quarantined: 2 }]);
  }, 300_000);
});
