/**
 * The compute job: incremental (a watermark per machine, run every minute) and backfill (a date
 * range, with progress). Both call the same pure pipeline on the same fixed segments, so they
 * write identical rows (tested in compute.db.test.ts).
 */

import {
  type ComputeOptions,
  computeRange,
  computeRangeInto,
  defaultFluidResolver,
  type FindingFlag,
  type FluidResolver,
  type MachineRow,
  type PreparedMachine,
  prepareMachine,
  type RawSeries,
  type ResolvedComputeOptions,
  type ResultRow,
  resolveComputeOptions,
} from '@isentrope/compute';
import type pg from 'pg';
import { JobsError } from '../errors.js';
import { readFindingFlags } from '../instrument/findings-store.js';
import { loadMachines } from '../queries/machines.js';
import {
  copyResultsRange,
  ensureResultPartitions,
  readComputeWatermarks,
  writeComputeWatermark,
  writeComputeWatermarks,
  writeResults,
} from '../queries/results.js';
import { ResultCopyBody } from '../queries/results-copy.js';
import { earliestSample, readSamples } from '../queries/samples.js';
import { ComputeWorkers, defaultComputeThreads } from './workers.js';

export interface ComputeJobOptions extends ComputeOptions {
  /** Now [ms]; default Date.now(). */
  readonly nowMs?: number;
  /** Time allowed for samples to arrive after their time stamp [ms]; default 2 minutes. */
  readonly settleMs?: number;
  /** Most grid time one incremental run computes per machine [ms]; default one day. */
  readonly maxCatchUpMs?: number;
  readonly machineIds?: readonly number[];
  readonly fluids?: FluidResolver;
  /** Called for each machine that cannot be computed (bad configuration); the run goes on. */
  readonly onMachineError?: (machineId: number, error: unknown) => void;
}

export interface ComputeRunStats {
  readonly machines: number;
  /** Result rows written. */
  readonly points: number;
  readonly failed: number;
  /** Machines whose configuration changed, recomputed from the beginning. */
  readonly recomputed: number;
}

/** Latest grid time [ms] whose lookahead samples can all have arrived by `nowMs`. */
export function computeHorizon(nowMs: number, settleMs: number, o: ResolvedComputeOptions): number {
  const last = Math.floor((nowMs - settleMs) / o.stepMs) * o.stepMs;
  // Point i needs samples up to t_i + (lookahead + 1) steps (its own interval and the spike window).
  return last - o.spikeHalfWindow * o.stepMs;
}

function allTagIds(m: PreparedMachine): number[] {
  const ids = [...m.tags.values()].map((t) => t.id);
  if (m.barometer !== undefined) ids.push(m.barometer.id);
  return ids;
}

/** Marks a promise's rejection as handled now; it still rejects where it is awaited. */
function settleLater<T>(p: Promise<T>): Promise<T> {
  p.catch(() => {});
  return p;
}

/**
 * Compute and write [fromMs, toMs) for one machine, reading samples in chunks of `chunkMs`. The
 * next chunk's samples are read and the last chunk's rows written (binary COPY) while a chunk is
 * computed, so the database and the model work at the same time.
 */
export async function computeMachineRange(
  pool: pg.Pool,
  machine: PreparedMachine,
  fromMs: number,
  toMs: number,
  o: ResolvedComputeOptions,
  chunkMs = 86_400_000,
  onChunk?: (doneToMs: number, points: number) => void,
  workers?: ComputeWorkers,
  findings: readonly FindingFlag[] = [],
): Promise<number> {
  const ids = allTagIds(machine);
  // Chunks end on segment boundaries so each segment is read whole.
  const chunk = Math.max(o.segmentMs, Math.floor(chunkMs / o.segmentMs) * o.segmentMs);
  const ranges: [number, number][] = [];
  for (let a = fromMs; a < toMs; ) {
    const b = Math.min(toMs, (Math.floor(a / chunk) + 1) * chunk);
    ranges.push([a, b]);
    a = b;
  }
  const read = ([a, b]: [number, number]) => {
    const segA = Math.floor(a / o.segmentMs) * o.segmentMs;
    const segB = Math.ceil(b / o.segmentMs) * o.segmentMs;
    return settleLater(
      readSamples(
        pool,
        ids,
        segA - o.lookbackPoints * o.stepMs - o.maxAgeMs,
        segB + (o.spikeHalfWindow + 1) * o.stepMs,
      ),
    );
  };
  let points = 0;
  let next = ranges[0] === undefined ? undefined : read(ranges[0]);
  let writing: Promise<void> = Promise.resolve();
  for (let k = 0; k < ranges.length; k++) {
    const [a, b] = ranges[k] as [number, number];
    const samples = await (next as Promise<Map<number, RawSeries>>);
    const following = ranges[k + 1];
    next = following === undefined ? undefined : read(following);
    // On a worker the rows come back encoded; in process they are encoded here.
    const { body, rows } =
      workers === undefined
        ? encodeInProcess(machine, samples, a, b, o, findings)
        : await workers.compute(machine.row, samples, a, b, o, findings);
    await writing;
    writing = settleLater(
      (async () => {
        await ensureResultPartitions(pool, a, b);
        await copyResultsRange(pool, machine.row.id, a, b, body);
        onChunk?.(b, rows);
      })(),
    );
    points += rows;
  }
  await writing;
  return points;
}

function encodeInProcess(
  machine: PreparedMachine,
  samples: ReadonlyMap<number, RawSeries>,
  fromMs: number,
  toMs: number,
  o: ResolvedComputeOptions,
  findings: readonly FindingFlag[],
): { body: Buffer; rows: number } {
  const out = new ResultCopyBody(machine.row.id, fromMs, toMs, Math.ceil((toMs - fromMs) / o.stepMs));
  computeRangeInto(machine, samples, fromMs, toMs, o, (row) => out.add(row), findings);
  return { body: out.finish(), rows: out.rows };
}

/** One machine's share of an incremental run. */
interface Planned {
  readonly machine: PreparedMachine;
  readonly from: number;
  readonly to: number;
}

/** What an incremental run has found so far, and where it reports a machine it cannot compute. */
interface RunTally {
  points: number;
  failed: number;
  recomputed: number;
  readonly fail: (machineId: number, error: unknown) => void;
}

/**
 * Machines one segment or less behind over the same range: one sample query, one results
 * statement and one watermark statement for all of them.
 */
async function computeBatch(
  pool: pg.Pool,
  group: readonly Planned[],
  o: ResolvedComputeOptions,
  findings: ReadonlyMap<number, readonly FindingFlag[]>,
  tally: RunTally,
): Promise<void> {
  const { from, to } = group[0] as Planned;
  const segA = Math.floor(from / o.segmentMs) * o.segmentMs;
  const segB = Math.ceil(to / o.segmentMs) * o.segmentMs;
  let samples: Awaited<ReturnType<typeof readSamples>>;
  try {
    samples = await readSamples(
      pool,
      group.flatMap((p) => allTagIds(p.machine)),
      segA - o.lookbackPoints * o.stepMs - o.maxAgeMs,
      segB + (o.spikeHalfWindow + 1) * o.stepMs,
    );
  } catch (error) {
    for (const p of group) tally.fail(p.machine.row.id, error);
    return;
  }
  const out: ResultRow[] = [];
  const done: Planned[] = [];
  for (const p of group) {
    try {
      for (const r of computeRange(p.machine, samples, from, to, o, findings.get(p.machine.row.id)))
        out.push(r);
      done.push(p);
    } catch (error) {
      tally.fail(p.machine.row.id, error);
    }
  }
  try {
    await ensureResultPartitions(pool, from, to);
    await writeResults(pool, out);
    await writeComputeWatermarks(
      pool,
      done.map((p) => ({ machineId: p.machine.row.id, configHash: p.machine.configHash, watermarkMs: to })),
    );
    tally.points += out.length;
  } catch (error) {
    for (const p of done) tally.fail(p.machine.row.id, error);
  }
}

/**
 * One machine of an incremental run: far behind, it catches up here in chunks; one segment or
 * less behind, it is returned to be computed with the batch.
 */
async function planMachine(
  pool: pg.Pool,
  row: MachineRow,
  mark: { watermarkMs: number; configHash: string } | undefined,
  horizon: number,
  o: ResolvedComputeOptions,
  options: ComputeJobOptions,
  findings: readonly FindingFlag[] | undefined,
  tally: RunTally,
): Promise<Planned | undefined> {
  const machine = prepareMachine(row, options.fluids ?? defaultFluidResolver);
  let from = mark?.watermarkMs;
  if (mark === undefined || mark.configHash !== machine.configHash) {
    // New machine, or a unit / configuration change: (re)compute from the first sample.
    if (mark !== undefined) tally.recomputed++;
    const first = await earliestSample(pool, allTagIds(machine));
    if (first === undefined) return undefined;
    from = Math.floor(first / o.stepMs) * o.stepMs;
  }
  if (from === undefined) return undefined;
  const to = Math.min(horizon, from + (options.maxCatchUpMs ?? 86_400_000));
  if (to <= from) {
    if (mark?.configHash !== machine.configHash)
      await writeComputeWatermark(pool, row.id, machine.configHash, from);
    return undefined;
  }
  if (to - from <= o.segmentMs) return { machine, from, to };
  tally.points += await computeMachineRange(
    pool,
    machine,
    from,
    to,
    o,
    86_400_000,
    undefined,
    undefined,
    findings,
  );
  await writeComputeWatermark(pool, row.id, machine.configHash, to);
  return undefined;
}

/**
 * One incremental run over every machine (or the given ones). Machines one segment or less behind
 * (the steady state of a minute-by-minute schedule) are read, computed and written together: one
 * sample query, one results statement and one watermark statement per run; machines further
 * behind catch up one by one in chunks. The stored instrument findings are read once and flag the
 * rows they cover.
 */
export async function runComputeOnce(
  pool: pg.Pool,
  options: ComputeJobOptions = {},
): Promise<ComputeRunStats> {
  const o = resolveComputeOptions(options);
  const now = options.nowMs ?? Date.now();
  const horizon = computeHorizon(now, options.settleMs ?? 120_000, o);
  const rows = await loadMachines(pool, options.machineIds);
  const marks = await readComputeWatermarks(pool, options.machineIds);
  const findings = await readFindingFlags(pool, options.machineIds);
  const tally: RunTally = {
    points: 0,
    failed: 0,
    recomputed: 0,
    fail: (id, error) => {
      tally.failed++;
      options.onMachineError?.(id, error);
    },
  };
  const batch: Planned[] = [];
  for (const row of rows) {
    try {
      const p = await planMachine(
        pool,
        row,
        marks.get(row.id),
        horizon,
        o,
        options,
        findings.get(row.id),
        tally,
      );
      if (p !== undefined) batch.push(p);
    } catch (error) {
      tally.fail(row.id, error);
    }
  }
  // The batch, grouped by range (usually one group: every machine one minute behind).
  const groups = new Map<string, Planned[]>();
  for (const p of batch) {
    const key = `${p.from}:${p.to}`;
    const g = groups.get(key);
    if (g === undefined) groups.set(key, [p]);
    else g.push(p);
  }
  for (const group of groups.values()) await computeBatch(pool, group, o, findings, tally);
  return { machines: rows.length, points: tally.points, failed: tally.failed, recomputed: tally.recomputed };
}

export interface BackfillOptions extends ComputeOptions {
  /** Range start [ms or Date], inclusive; floored to the step. */
  readonly from: number | Date;
  /** Range end [ms or Date], exclusive. */
  readonly to: number | Date;
  readonly machineIds?: readonly number[];
  readonly fluids?: FluidResolver;
  /** Progress in grid points: done of total, after each chunk. */
  readonly onProgress?: (done: number, total: number) => void;
  /** Samples read per chunk [ms]; default defaultChunkMs(step): 3 days on the 1-minute grid. */
  readonly chunkMs?: number;
  /**
   * Compute worker threads; default one per core (at most 4) for 50,000 grid points or more, else
   * 0. 0 computes on the main thread, as does a backfill with its own `fluids` resolver (a
   * function cannot be sent to a worker). A ComputeWorkers of the caller's is used as it is and
   * left open, so several backfills in a row start and warm up their threads once.
   */
  readonly workers?: number | ComputeWorkers;
  /** Machines in progress at the same time (their database waits overlap); default workers + 1, at least 3. */
  readonly concurrency?: number;
  /**
   * Move each machine's incremental watermark to the end of the range (when it is behind),
   * so the every-minute job carries on from there instead of redoing the range; for a first
   * load of history. Off by default: a backfill normally repairs a range without moving it.
   */
  readonly advanceWatermark?: boolean;
}

/**
 * Samples read (and results written) per task of a backfill: 4320 grid points (3 days on the
 * 1-minute grid), at least a day and at most 31 days of samples. Fewer, larger transactions:
 * 3-day chunks ran about 20 % faster than 1-day chunks on the jobs bench; 7 days gained nothing
 * more (measured).
 */
export function defaultChunkMs(stepMs: number): number {
  return Math.min(31 * 86_400_000, Math.max(86_400_000, 4320 * stepMs));
}

/** Grid points below which a backfill computes on the main thread by default. */
const MIN_POINTS_FOR_WORKERS = 50_000;

export interface BackfillStats {
  readonly machines: number;
  readonly points: number;
  readonly ms: number;
  /** Compute worker threads used (0: computed on the main thread). */
  readonly workers: number;
}

/**
 * Compute threads of a backfill. Threads take about half a second each to start and warm up, so a
 * small range stays on the main thread unless workers are asked for; a backfill with its own
 * `fluids` resolver always does (a function cannot be sent to a worker).
 */
function backfillThreads(options: BackfillOptions, total: number): number {
  if (options.fluids !== undefined) return 0;
  if (options.workers instanceof ComputeWorkers) return options.workers.threads;
  if (typeof options.workers === 'number') return options.workers;
  return total >= MIN_POINTS_FOR_WORKERS ? defaultComputeThreads() : 0;
}

/**
 * Recompute [from, to) for every machine (or the given ones). Does not move the incremental
 * watermark: rows written are the same rows the incremental run writes for these times.
 */
export async function backfill(pool: pg.Pool, options: BackfillOptions): Promise<BackfillStats> {
  const o = resolveComputeOptions(options);
  const fromMs = Math.floor(Number(options.from.valueOf()) / o.stepMs) * o.stepMs;
  const toMs = Math.floor(Number(options.to.valueOf()) / o.stepMs) * o.stepMs;
  if (!Number.isFinite(fromMs) || !Number.isFinite(toMs) || !(toMs > fromMs))
    throw new JobsError('JOBS_BAD_RANGE', `backfill range is empty or reversed: ${fromMs} to ${toMs} [ms]`, {
      fromMs,
      toMs,
    });
  const started = Date.now();
  const rows = await loadMachines(pool, options.machineIds);
  if (options.machineIds !== undefined && rows.length !== options.machineIds.length)
    throw new JobsError('JOBS_NOT_FOUND', 'some machine ids do not exist or are retired', {
      asked: options.machineIds,
      found: rows.map((r) => r.id),
    });
  const perMachine = (toMs - fromMs) / o.stepMs;
  const total = perMachine * rows.length;
  let done = 0;
  options.onProgress?.(0, total);
  // Every machine is prepared first, so a bad configuration fails before any row is written.
  const machines = rows.map((row) => prepareMachine(row, options.fluids ?? defaultFluidResolver));
  const findings = await readFindingFlags(
    pool,
    machines.map((m) => m.row.id),
  );
  const given = options.workers instanceof ComputeWorkers ? options.workers : undefined;
  const threads = backfillThreads(options, total);
  const workers = threads === 0 ? undefined : (given ?? new ComputeWorkers(threads));
  // A few machines at once, so every worker has work while the others wait on the database.
  const lanes = Math.max(1, Math.min(options.concurrency ?? Math.max(3, threads + 1), machines.length));
  let nextMachine = 0;
  const lane = async (): Promise<void> => {
    for (let k = nextMachine++; k < machines.length; k = nextMachine++) {
      const machine = machines[k] as PreparedMachine;
      await computeMachineRange(
        pool,
        machine,
        fromMs,
        toMs,
        o,
        options.chunkMs ?? defaultChunkMs(o.stepMs),
        (_, n) => {
          done += n;
          options.onProgress?.(done, total);
        },
        workers,
        findings.get(machine.row.id),
      );
    }
  };
  // Every lane runs to its end before the workers close; then the first failure is thrown.
  const settled = await Promise.allSettled(Array.from({ length: lanes }, lane));
  if (given === undefined) await workers?.close();
  for (const s of settled) if (s.status === 'rejected') throw s.reason;
  if (options.advanceWatermark === true) {
    const marks = await readComputeWatermarks(
      pool,
      machines.map((m) => m.row.id),
    );
    await writeComputeWatermarks(
      pool,
      machines
        .filter((m) => {
          const mark = marks.get(m.row.id);
          return mark === undefined || mark.configHash !== m.configHash || mark.watermarkMs < toMs;
        })
        .map((m) => ({ machineId: m.row.id, configHash: m.configHash, watermarkMs: toMs })),
    );
  }
  return { machines: rows.length, points: done, ms: Date.now() - started, workers: threads };
}

/** A range of a machine's stored rows and the grid they were computed on. */
export interface StoredRange {
  readonly fromMs: number;
  readonly toMs: number;
  readonly stepMs: number;
}

/**
 * Recompute a machine's stored rows over the given ranges, each on its own grid (default settings
 * otherwise), with the stored instrument findings: the instrument step calls this when a finding
 * changes, so the rows carry its flag as the compute pass writes them, never by a later rewrite.
 */
export async function recomputeStoredRows(
  pool: pg.Pool,
  row: MachineRow,
  ranges: readonly StoredRange[],
  fluids: FluidResolver = defaultFluidResolver,
): Promise<number> {
  if (ranges.length === 0) return 0;
  const machine = prepareMachine(row, fluids);
  const findings = (await readFindingFlags(pool, [row.id])).get(row.id);
  let points = 0;
  for (const r of ranges) {
    const o = resolveComputeOptions({ gridMs: r.stepMs });
    const chunkMs = defaultChunkMs(o.stepMs);
    points += await computeMachineRange(
      pool,
      machine,
      r.fromMs,
      r.toMs,
      o,
      chunkMs,
      undefined,
      undefined,
      findings,
    );
  }
  return points;
}
