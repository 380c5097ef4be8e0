/**
 * The fault run: traffic from the suite's senders while four lanes inject faults at random
 * (seeded) moments, overlapping as they fall: SIGKILL of Isentrope (mid-file, mid-batch,
 * with samples in the on-disk buffer) and restart; database stop and restart; OPC UA server
 * cut off and restarted; the disk-buffer folder read-only and writable again.
 */
import { chmod, readdir } from 'node:fs/promises';
import { join } from 'node:path';
import { type Random, sleep } from './random.js';
import { CsvSender, PushSender, type SenderFindings } from './senders.js';
import { bufferedBytes, PUSH_TOKEN, type World } from './world.js';

export type FaultKind =
  | 'kill mid-file'
  | 'kill mid-batch'
  | 'kill with buffered samples'
  | 'database stop'
  | 'OPC UA cut'
  | 'buffer read-only';

export interface Fault {
  readonly kind: FaultKind;
  readonly start: number;
  end: number;
  note?: string;
}

export interface FaultPlan {
  readonly kills: number;
  readonly dbStops: number;
  readonly uaCuts: number;
  readonly readOnly: number;
  /** Database outage [ms]: 5-120 s, scaled down in the short mode. */
  readonly dbOutageMs: readonly [number, number];
  readonly uaOutageMs: readonly [number, number];
  readonly readOnlyMs: readonly [number, number];
  /** Pause between faults in one lane [ms]. */
  readonly gapMs: readonly [number, number];
}

interface Run {
  readonly world: World;
  readonly random: Random;
  readonly faults: Fault[];
  readonly plan: FaultPlan;
  readonly csv: CsvSender;
  readonly push: PushSender;
  readonly say: (line: string) => void;
  dbDown: boolean;
  stopping: boolean;
}

const between = (r: Random, [a, b]: readonly [number, number]) => r.int(a, b);

async function dbLane(run: Run): Promise<void> {
  for (let i = 0; i < run.plan.dbStops && !run.stopping; i++) {
    await sleep(between(run.random, run.plan.gapMs));
    const outage = between(run.random, run.plan.dbOutageMs);
    const fault: Fault = {
      kind: 'database stop',
      start: Date.now(),
      end: 0,
      note: `${Math.round(outage / 1000)} s`,
    };
    run.faults.push(fault);
    run.dbDown = true;
    await run.world.cluster.stopImmediate();
    await sleep(outage);
    await run.world.cluster.start();
    run.dbDown = false;
    fault.end = Date.now();
  }
}

async function uaLane(run: Run): Promise<void> {
  for (let i = 0; i < run.plan.uaCuts && !run.stopping; i++) {
    await sleep(between(run.random, run.plan.gapMs));
    const fault: Fault = { kind: 'OPC UA cut', start: Date.now(), end: 0 };
    run.faults.push(fault);
    await run.world.ua.cut();
    await sleep(between(run.random, run.plan.uaOutageMs));
    await run.world.ua.start();
    fault.end = Date.now();
  }
}

async function setReadOnly(dir: string, readOnly: boolean): Promise<void> {
  const names = await readdir(dir).catch(() => [] as string[]);
  for (const n of names) await chmod(join(dir, n), readOnly ? 0o444 : 0o644).catch(() => undefined);
  await chmod(dir, readOnly ? 0o555 : 0o755).catch(() => undefined);
}

async function readOnlyLane(run: Run): Promise<void> {
  for (let i = 0; i < run.plan.readOnly && !run.stopping; i++) {
    await sleep(between(run.random, run.plan.gapMs));
    const fault: Fault = { kind: 'buffer read-only', start: Date.now(), end: 0 };
    fault.note = run.dbDown ? 'while the database was down' : 'database up';
    run.faults.push(fault);
    await setReadOnly(run.world.bufferDir, true);
    await sleep(between(run.random, run.plan.readOnlyMs));
    await setReadOnly(run.world.bufferDir, false);
    fault.end = Date.now();
  }
}

/** Waits (bounded) until cond holds; false when it never did. */
async function until(cond: () => boolean | Promise<boolean>, ms: number): Promise<boolean> {
  const deadline = Date.now() + ms;
  while (Date.now() < deadline) {
    if (await cond()) return true;
    await sleep(100);
  }
  return false;
}

async function killOnce(run: Run): Promise<void> {
  const { world, random } = run;
  let kind: FaultKind = random.pick([
    'kill mid-file',
    'kill mid-batch',
    'kill with buffered samples',
  ] as const);
  if (kind === 'kill with buffered samples') {
    // Needs the database down and the buffer holding samples; else another kind.
    const ok = await until(async () => run.dbDown && (await bufferedBytes(world.bufferDir)) > 0, 30_000);
    if (!ok) kind = 'kill mid-batch';
  }
  if (kind === 'kill mid-file') {
    // A large file: the watcher takes it after two polls (2-4 s) and needs a while to store it.
    await run.csv.drop(30_000);
    await sleep(random.int(2500, 6000));
  }
  let inFlight: Promise<boolean> | undefined;
  if (kind === 'kill mid-batch') {
    run.push.make(random.int(2000, 5000));
    inFlight = run.push.deliver();
    await sleep(random.int(20, 400));
  }
  const fault: Fault = { kind, start: Date.now(), end: 0 };
  if (kind === 'kill with buffered samples')
    fault.note = `${await bufferedBytes(world.bufferDir)} bytes buffered`;
  run.faults.push(fault);
  await world.app.kill();
  await inFlight;
  await world.app.startUntilHealthy(400_000);
  fault.end = Date.now();
}

async function killLane(run: Run): Promise<void> {
  for (let i = 0; i < run.plan.kills && !run.stopping; i++) {
    await sleep(between(run.random, run.plan.gapMs));
    await killOnce(run);
  }
}

/** Steady traffic: a CSV file and a push batch about every second, until told to stop. */
async function traffic(run: Run, deadline: number): Promise<void> {
  while (!run.stopping && Date.now() < deadline) {
    await run.csv.drop(run.random.int(50, 2000));
    run.push.make(run.random.int(20, 300));
    await Promise.race([run.push.deliver(), sleep(3000)]);
    await sleep(run.random.int(300, 1500));
  }
}

export interface FaultRunResult {
  readonly faults: Fault[];
  readonly findings: SenderFindings;
  readonly csvFiles: number;
  readonly pushBatches: number;
}

export async function runFaultLanes(
  world: World,
  random: Random,
  plan: FaultPlan,
  say: (line: string) => void,
  deadlineMs: number,
): Promise<FaultRunResult> {
  const findings: SenderFindings = { pushStatus: new Map(), pushRejected: 0, pushGivenUp: 0 };
  const day = 86_400_000;
  const csv = new CsvSender(world.csvFolder, world.sent, random, Date.now() - 3 * day);
  const push = new PushSender(
    () => world.app.baseUrl,
    PUSH_TOKEN,
    world.sent,
    random,
    Date.now() - 2 * day,
    findings,
  );
  const run: Run = { world, random, faults: [], plan, csv, push, say, dbDown: false, stopping: false };
  const deadline = Date.now() + deadlineMs;
  const flow = traffic(run, deadline);
  const progress = setInterval(() => say(`  ${run.faults.length} faults so far`), 60_000);
  try {
    const lanes = Promise.all([killLane(run), dbLane(run), uaLane(run), readOnlyLane(run)]);
    const finished = await Promise.race([lanes.then(() => true), sleep(deadlineMs).then(() => false)]);
    if (!finished) say('  the fault lanes ran out of time; stopping them');
    run.stopping = true;
    await lanes.catch((error: unknown) => say(`  a fault lane failed: ${String(error)}`));
  } finally {
    run.stopping = true;
    clearInterval(progress);
    await flow;
    if (!world.cluster.running) await world.cluster.start();
    await setReadOnly(world.bufferDir, false);
    if (!world.ua.up) await world.ua.start();
  }
  await world.app.startUntilHealthy(300_000);
  await push.drain(Math.max(60_000, deadline - Date.now()));
  // The last values need a moment to reach a subscription; then nothing new is published.
  await sleep(5000);
  world.ua.pause();
  return { faults: run.faults, findings, csvFiles: csv.files, pushBatches: push.batches };
}
