import pino from 'pino';
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { Lifecycle } from './lifecycle.js';

interface Line {
  level: number;
  msg: string;
  part?: string;
  doing?: string;
  leftBehind?: string[];
  failed?: string[];
  stopping?: string[];
}

/** A logger that keeps its lines (pino levels: 20 debug, 30 info, 40 warn, 50 error). */
function capture(): { logger: pino.Logger; lines: Line[] } {
  const lines: Line[] = [];
  const logger = pino({ level: 'debug' }, { write: (text: string) => lines.push(JSON.parse(text) as Line) });
  return { logger, lines };
}

/** A part that never finishes stopping (as the ingest did, retrying one batch for ever). */
const hangs = () => new Promise<void>(() => {});

describe('Lifecycle', () => {
  beforeEach(() => {
    vi.useFakeTimers();
  });
  afterEach(() => {
    vi.useRealTimers();
  });

  it('closes the parts newest first and reports a clean stop', async () => {
    const { logger, lines } = capture();
    const lifecycle = new Lifecycle(logger, { deadlineMs: 1000 });
    const order: string[] = [];
    for (const name of ['embedded PostgreSQL', 'database pool', 'ingest', 'http'])
      lifecycle.add(name, async () => {
        order.push(name);
      });
    const outcome = await lifecycle.shutdown('SIGTERM');
    expect(order).toEqual(['http', 'ingest', 'database pool', 'embedded PostgreSQL']);
    expect(outcome).toEqual({ clean: true, leftBehind: [], failed: [] });
    expect(lines.at(-1)).toMatchObject({ level: 30, msg: 'stopped' });
  });

  it('leaves a part that overruns its deadline behind, says what it was doing, and still stops the database last', async () => {
    const { logger, lines } = capture();
    const lifecycle = new Lifecycle(logger, { deadlineMs: 1000 });
    const order: string[] = [];
    lifecycle.add('embedded PostgreSQL', async () => {
      order.push('embedded PostgreSQL');
    });
    lifecycle.add('database pool', async () => {
      order.push('database pool');
    });
    lifecycle.add('ingest', hangs, { doing: () => 'plant-csv: reconnecting (database unreachable)' });
    lifecycle.add('http', async () => {
      order.push('http');
    });
    const stopping = lifecycle.shutdown('SIGINT');
    await vi.advanceTimersByTimeAsync(999);
    expect(order).toEqual(['http']); // the ingest still has its time
    await vi.advanceTimersByTimeAsync(1);
    const outcome = await stopping;
    expect(order).toEqual(['http', 'database pool', 'embedded PostgreSQL']);
    expect(outcome).toEqual({ clean: false, leftBehind: ['ingest'], failed: [] });
    const warning = lines.find((line) => line.part === 'ingest' && line.level === 40);
    expect(warning?.msg).toContain('ingest did not stop within 1 s; left behind');
    expect(warning?.doing).toBe('plant-csv: reconnecting (database unreachable)');
    expect(lines.at(-1)).toMatchObject({ level: 40, msg: 'stopped', leftBehind: ['ingest'] });
  });

  it('logs a part whose stop fails and goes on with the others', async () => {
    const { logger, lines } = capture();
    const lifecycle = new Lifecycle(logger, { deadlineMs: 1000 });
    let databaseClosed = false;
    lifecycle.add('database pool', async () => {
      databaseClosed = true;
    });
    lifecycle.add('jobs', () => {
      throw new Error('lock connection already gone');
    });
    const outcome = await lifecycle.shutdown('SIGTERM');
    expect(databaseClosed).toBe(true);
    expect(outcome).toEqual({ clean: false, leftBehind: [], failed: ['jobs'] });
    expect(lines.find((line) => line.level === 50)).toMatchObject({
      part: 'jobs',
      msg: 'jobs failed to close cleanly',
    });
  });

  it('exits 0 after a clean stop on the first signal', async () => {
    const { logger } = capture();
    const lifecycle = new Lifecycle(logger, { deadlineMs: 1000 });
    lifecycle.add('http', async () => {});
    expect(await lifecycle.onSignal('SIGTERM')).toBe(0);
  });

  it('on a second signal stops at once, stopping only the embedded server, and exits 1', async () => {
    const { logger, lines } = capture();
    const lifecycle = new Lifecycle(logger, { deadlineMs: 10_000 });
    const stopped: string[] = [];
    lifecycle.add(
      'embedded PostgreSQL',
      async () => {
        stopped.push('embedded PostgreSQL');
      },
      { evenWhenForced: true },
    );
    lifecycle.add('database pool', async () => {
      stopped.push('database pool');
    });
    lifecycle.add('ingest', hangs);
    const first = lifecycle.onSignal('SIGINT');
    await vi.advanceTimersByTimeAsync(100); // well inside the ingest's 10 s
    expect(await lifecycle.onSignal('SIGINT')).toBe(1);
    expect(stopped).toEqual(['embedded PostgreSQL']);
    expect(lines.find((line) => line.msg.startsWith('stopping at once'))).toMatchObject({
      level: 40,
      stopping: ['embedded PostgreSQL'],
    });
    // The first shutdown would have gone on to the pool; the process exits before that.
    await vi.advanceTimersByTimeAsync(10_000);
    expect(await first).toBe(1);
  });

  it('gives the embedded server its deadline on a forced stop too', async () => {
    const { logger, lines } = capture();
    const lifecycle = new Lifecycle(logger, { deadlineMs: 2000 });
    lifecycle.add('embedded PostgreSQL', hangs, { evenWhenForced: true });
    const forced = lifecycle.forceStop('second signal (SIGTERM)');
    await vi.advanceTimersByTimeAsync(2000);
    await forced;
    expect(lines.at(-1)).toMatchObject({ level: 40, part: 'embedded PostgreSQL' });
  });
});
