import { mkdir, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import type { PlantFile } from '@isentrope/plant';
import { type AppliedPlant, applyPlant, packSamples, SampleWriter } from '@isentrope/store';
import type pg from 'pg';
import { writeDemoHistory } from './history.js';
import { type LiveFeed, startLiveFeed } from './live.js';
import { type DemoOpcuaServer, startDemoOpcuaServer } from './opcua-server.js';
import { demoPlant, demoPlantText } from './plant.js';
import type { DemoSpan } from './scenario.js';

/**
 * The invented demo plant, end to end: its plant file loaded like any other, a history
 * written straight into the samples table, and a live feed (CSV drops and an OPC UA server)
 * that the ingest service takes in like a real plant's. DEMO DATA - INVENTED.
 */

const DAY = 86_400_000;
const MINUTE = 60_000;
const STATE_JOB = 'demo';

export interface DemoOptions {
  readonly pool: pg.Pool;
  readonly dataDir: string;
  /** Days of history on the first start (default 365). */
  readonly days?: number;
  /** Port of the OPC UA simulation server on 127.0.0.1 (default 48400). */
  readonly opcuaPort?: number;
  readonly now?: () => number;
  /** Progress of the history write, 0..1. */
  readonly onHistoryProgress?: (done: number) => void;
  /** Pack the history written, older than the pack age, into compressed blocks (default true). */
  readonly pack?: boolean;
}

export interface PreparedDemo {
  readonly plant: PlantFile;
  readonly applied: AppliedPlant;
  readonly span: DemoSpan;
  /** Samples are stored up to here [epoch ms]; the live feed starts here. */
  readonly historyEnd: number;
  /** True when this call wrote the history (first start). */
  readonly createdHistory: boolean;
  readonly samplesWritten: number;
  /** Samples of it packed into compressed blocks (packSamples) by this call. */
  readonly samplesPacked: number;
  readonly opcuaEndpoint: string;
  readonly dropFolder: string;
}

/** Sampling step of the history: 1 minute for the last two weeks, 5 minutes before. */
export function historyStep(t: number, end: number): number {
  return end - t <= 14 * DAY ? MINUTE : 5 * MINUTE;
}

async function readState(pool: pg.Pool): Promise<Record<string, number>> {
  const rows = await pool.query<{ key: string; watermark: Date }>(
    'SELECT key, watermark FROM job_watermarks WHERE job = $1',
    [STATE_JOB],
  );
  return Object.fromEntries(rows.rows.map((r) => [r.key, r.watermark.getTime()]));
}

async function writeState(pool: pg.Pool, key: string, value: number): Promise<void> {
  await pool.query(
    `INSERT INTO job_watermarks (job, key, watermark) VALUES ($1, $2, $3)
     ON CONFLICT (job, key) DO UPDATE SET watermark = excluded.watermark, updated_at = now()`,
    [STATE_JOB, key, new Date(value)],
  );
}

/**
 * Loads the demo plant and makes sure its history exists: the first time, `days` of it up
 * to now; on a later start, the time the process was stopped (at most a week) is filled in.
 */
export async function prepareDemo(options: DemoOptions): Promise<PreparedDemo> {
  const now = options.now ?? Date.now;
  const demoDir = join(options.dataDir, 'demo');
  const dropFolder = join(demoDir, 'drop');
  await mkdir(dropFolder, { recursive: true });
  const opcuaEndpoint = `opc.tcp://127.0.0.1:${options.opcuaPort ?? 48400}`;
  const state = await readState(options.pool);
  const nowMinute = Math.floor(now() / MINUTE) * MINUTE;
  const spanStart = state['span-start'];
  const spanEnd = state['span-end'];
  const span: DemoSpan =
    spanStart !== undefined && spanEnd !== undefined
      ? { start: spanStart, end: spanEnd }
      : { start: nowMinute - (options.days ?? 365) * DAY, end: nowMinute };

  // The baseline reference period: the first fifth of the story, after a day of settling in.
  const length = span.end - span.start;
  const plantOptions = {
    referenceFrom: span.start + Math.min(DAY, 0.02 * length),
    referenceTo: span.start + 0.2 * length,
    dropFolder,
    opcuaEndpoint,
  };
  const plant = await demoPlant(plantOptions);
  await writeFile(join(demoDir, 'plant.yaml'), await demoPlantText(plantOptions), 'utf8');
  const applied = await applyPlant(options.pool, plant, 'demo');

  if (spanStart === undefined) {
    await writeState(options.pool, 'span-start', span.start);
    await writeState(options.pool, 'span-end', span.end);
  }
  const from = state['history-end'] ?? span.start;
  const to = spanStart === undefined ? span.end : Math.max(from, Math.min(nowMinute, from + 7 * DAY));
  let written = 0;
  if (to > from) {
    const writer = new SampleWriter(options.pool, { batchSize: 50_000, flushIntervalMs: 0 });
    // One pass per sampling step, so each stretch is written at its own resolution.
    const fineFrom = Math.max(from, span.end - 14 * DAY);
    const stretches: [number, number, number][] = [];
    if (fineFrom > from) stretches.push([from, fineFrom, 5 * MINUTE]);
    stretches.push([Math.max(from, fineFrom), to, MINUTE]);
    const total = to - from;
    let before = 0;
    for (const [a, b, step] of stretches) {
      if (b <= a) continue;
      written += await writeDemoHistory({
        span,
        from: a,
        to: b,
        stepMs: step,
        tagIds: applied.tags,
        write: (samples) => writer.write(samples),
        onProgress: (done) => options.onHistoryProgress?.((before + done * (b - a)) / total),
      });
      before += b - a;
    }
    await writer.close();
    await writeState(options.pool, 'history-end', to);
  }
  // What the pack job would do within the hour, done now: the history is stored as blocks from the start.
  const packed =
    written > 0 && (options.pack ?? true)
      ? (await packSamples(options.pool, { nowMs: now() })).rowsRemoved
      : 0;
  return {
    plant,
    applied,
    span,
    historyEnd: to,
    createdHistory: spanStart === undefined,
    samplesWritten: written,
    samplesPacked: packed,
    opcuaEndpoint,
    dropFolder,
  };
}

export interface RunningDemoFeed {
  readonly opcua: DemoOpcuaServer;
  readonly feed: LiveFeed;
  stop(): Promise<void>;
}

/** Starts the OPC UA simulation server and the CSV drops. */
export async function startDemoFeed(
  prepared: PreparedDemo,
  options: { dataDir: string; pool: pg.Pool; now?: () => number; onError?: (error: unknown) => void },
): Promise<RunningDemoFeed> {
  const opcuaTags = prepared.plant.tags.filter((t) => t.opcua !== undefined).map((t) => t.name);
  const csvTags = prepared.plant.tags.filter((t) => t.opcua === undefined).map((t) => t.name);
  const port = Number(new URL(prepared.opcuaEndpoint.replace('opc.tcp://', 'http://')).port);
  const opcua = await startDemoOpcuaServer({
    port,
    tagNames: opcuaTags,
    pkiDir: join(options.dataDir, 'demo', 'pki'),
  });
  const feed = await startLiveFeed({
    span: prepared.span,
    dropFolder: prepared.dropFolder,
    csvTags,
    opcuaTags,
    opcua,
    from: prepared.historyEnd,
    ...(options.now === undefined ? {} : { now: options.now }),
    ...(options.onError === undefined ? {} : { onError: options.onError }),
  });
  // What the live feed has dropped counts as history on the next start.
  const pool = options.pool;
  return {
    opcua,
    feed,
    async stop() {
      await feed.stop();
      await opcua.stop();
      const now = Math.floor((options.now ?? Date.now)() / MINUTE) * MINUTE;
      await writeState(pool, 'history-end', Math.max(prepared.historyEnd, now)).catch(() => {});
    },
  };
}
