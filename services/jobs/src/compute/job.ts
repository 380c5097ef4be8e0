/**
 * The compute job: incremental (a watermark per machine, run every minute) and backfill (a date
 * range, with progress). Both call the same pure pipeline on the same fixed segments, so they
 * write identical rows (tested in compute.db.test.ts).
 */
import type pg from 'pg';
import { JobsError } from '../errors.js';
import { loadMachines } from '../queries/machines.js';
import {
  ensureResultPartitions,
  readComputeWatermark,
  writeComputeWatermark,
  writeResults,
} from '../queries/results.js';
import { earliestSample, readSamples } from '../queries/samples.js';
import { defaultFluidResolver, type FluidResolver, type PreparedMachine, prepareMachine } from './config.js';
import {
  type ComputeOptions,
  computeRange,
  type ResolvedComputeOptions,
  resolveComputeOptions,
} from './pipeline.js';

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

/** Compute and write [fromMs, toMs) for one machine, reading samples in chunks of `chunkMs`. */
export async function computeMachineRange(
  pool: pg.Pool,
  machine: PreparedMachine,
  fromMs: number,
  toMs: number,
  o: ResolvedComputeOptions,
  chunkMs = 86_400_000,
  onChunk?: (doneToMs: number, points: number) => void,
): Promise<number> {
  const ids = allTagIds(machine);
  let points = 0;
  // Chunks end on segment boundaries so each segment is read whole.
  const chunk = Math.max(o.segmentMs, Math.floor(chunkMs / o.segmentMs) * o.segmentMs);
  for (let a = fromMs; a < toMs; ) {
    const b = Math.min(toMs, (Math.floor(a / chunk) + 1) * chunk);
    const segA = Math.floor(a / o.segmentMs) * o.segmentMs;
    const segB = Math.ceil(b / o.segmentMs) * o.segmentMs;
    const samples = await readSamples(
      pool,
      ids,
      segA - o.lookbackPoints * o.stepMs - o.maxAgeMs,
      segB + (o.spikeHalfWindow + 1) * o.stepMs,
    );
    const rows = computeRange(machine, samples, a, b, o);
    await ensureResultPartitions(pool, a, b);
    await writeResults(pool, rows);
    points += rows.length;
    a = b;
    onChunk?.(b, rows.length);
  }
  return points;
}

/** One incremental run over every machine (or the given ones). */
export async function runComputeOnce(
  pool: pg.Pool,
  options: ComputeJobOptions = {},
): Promise<ComputeRunStats> {
  const o = resolveComputeOptions(options);
  const now = options.nowMs ?? Date.now();
  const horizon = computeHorizon(now, options.settleMs ?? 120_000, o);
  const rows = await loadMachines(pool, options.machineIds);
  let points = 0;
  let failed = 0;
  let recomputed = 0;
  for (const row of rows) {
    try {
      const machine = prepareMachine(row, options.fluids ?? defaultFluidResolver);
      const mark = await readComputeWatermark(pool, row.id);
      let from = mark?.watermarkMs;
      if (mark === undefined || mark.configHash !== machine.configHash) {
        // New machine, or a unit / configuration change: (re)compute from the first sample.
        if (mark !== undefined) recomputed++;
        const first = await earliestSample(pool, allTagIds(machine));
        if (first === undefined) continue;
        from = Math.floor(first / o.stepMs) * o.stepMs;
      }
      if (from === undefined) continue;
      const to = Math.min(horizon, from + (options.maxCatchUpMs ?? 86_400_000));
      if (to <= from) {
        if (mark?.configHash !== machine.configHash)
          await writeComputeWatermark(pool, row.id, machine.configHash, from);
        continue;
      }
      points += await computeMachineRange(pool, machine, from, to, o);
      await writeComputeWatermark(pool, row.id, machine.configHash, to);
    } catch (error) {
      failed++;
      options.onMachineError?.(row.id, error);
    }
  }
  return { machines: rows.length, points, failed, recomputed };
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
  /** Samples read per chunk [ms]; default one day. */
  readonly chunkMs?: number;
}

export interface BackfillStats {
  readonly machines: number;
  readonly points: number;
  readonly ms: number;
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
  for (const row of rows) {
    const machine = prepareMachine(row, options.fluids ?? defaultFluidResolver);
    await computeMachineRange(pool, machine, fromMs, toMs, o, options.chunkMs, (_, n) => {
      done += n;
      options.onProgress?.(done, total);
    });
  }
  return { machines: rows.length, points: done, ms: Date.now() - started };
}
