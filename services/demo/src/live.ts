import { mkdir, rename, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import type { DemoOpcuaServer } from './opcua-server.js';
import {
  DEMO_MACHINES,
  DEMO_TAGS,
  type DemoMachineId,
  type DemoSpan,
  demoReading,
  type MachineTruth,
  machineTruth,
} from './scenario.js';

/**
 * The live half of the demo: every minute a CSV file with the last minute's readings (every
 * 10 s) of the machines wired to the DCS drop folder, and every second new values on the
 * OPC UA simulation server for the compressor station.
 */

export function readingsAt(span: DemoSpan, t: number): Map<string, number> {
  const truths = new Map<DemoMachineId, MachineTruth>();
  for (const machine of DEMO_MACHINES) truths.set(machine, machineTruth(span, machine, t));
  const out = new Map<string, number>();
  DEMO_TAGS.forEach((tag, index) => {
    const value = demoReading(
      span,
      index,
      t,
      tag.machine === undefined ? undefined : truths.get(tag.machine),
    );
    if (value !== undefined) out.set(tag.name, value);
  });
  return out;
}

/** A wide CSV (ISO 8601 UTC timestamps, one column per tag) for times [from, to) every stepMs. */
export function demoCsv(
  span: DemoSpan,
  tagNames: readonly string[],
  from: number,
  to: number,
  stepMs: number,
): string {
  const lines = [`timestamp,${tagNames.join(',')}`];
  for (let t = from; t < to; t += stepMs) {
    const readings = readingsAt(span, t);
    lines.push(`${new Date(t).toISOString()},${tagNames.map((n) => readings.get(n) ?? '').join(',')}`);
  }
  return `${lines.join('\r\n')}\r\n`;
}

export interface LiveFeed {
  stop(): Promise<void>;
}

export interface LiveFeedOptions {
  readonly span: DemoSpan;
  readonly dropFolder: string;
  readonly csvTags: readonly string[];
  readonly opcuaTags: readonly string[];
  readonly opcua: DemoOpcuaServer | undefined;
  /** First minute not yet covered by history or earlier drops [epoch ms]. */
  readonly from: number;
  readonly now?: () => number;
  readonly onError?: (error: unknown) => void;
}

export async function startLiveFeed(options: LiveFeedOptions): Promise<LiveFeed> {
  const now = options.now ?? Date.now;
  await mkdir(options.dropFolder, { recursive: true });
  let next = options.from;
  let writing: Promise<void> = Promise.resolve();

  const dropCsv = async (): Promise<void> => {
    const end = Math.floor(now() / 60_000) * 60_000;
    // Bounded catch-up: at most a day of minutes in one file.
    const from = Math.max(next, end - 86_400_000);
    if (end <= from) return;
    const text = demoCsv(options.span, options.csvTags, from, end, 10_000);
    const name = `harbourside-${new Date(from).toISOString().replace(/[:.]/g, '').slice(0, 15)}Z`;
    const part = join(options.dropFolder, `${name}.csv.part`);
    await writeFile(part, text, 'utf8');
    // The rename is the signal that the file is complete; the ingest ignores *.part.
    await rename(part, join(options.dropFolder, `${name}.csv`));
    next = end;
  };

  const pushOpcua = (): void => {
    if (options.opcua === undefined) return;
    const t = Math.floor(now() / 1000) * 1000;
    const readings = readingsAt(options.span, t);
    for (const name of options.opcuaTags) {
      const value = readings.get(name);
      if (value !== undefined) options.opcua.update(name, value, t);
    }
  };

  const report = (error: unknown): void => options.onError?.(error);
  writing = dropCsv().catch(report);
  pushOpcua();
  const csvTimer = setInterval(() => {
    writing = writing.then(dropCsv).catch(report);
  }, 60_000);
  const opcuaTimer = setInterval(() => {
    try {
      pushOpcua();
    } catch (error) {
      report(error);
    }
  }, 1000);
  csvTimer.unref();
  opcuaTimer.unref();
  return {
    async stop() {
      clearInterval(csvTimer);
      clearInterval(opcuaTimer);
      await writing;
    },
  };
}
