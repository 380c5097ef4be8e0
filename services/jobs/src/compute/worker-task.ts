/**
 * The task a compute worker runs: one machine's results for [fromMs, toMs), computed by the same
 * pipeline as in-process runs and encoded as a COPY body where they were computed, so only bytes
 * travel back to the main thread (the rows as objects would cost more to copy than to encode).
 */

import {
  computeRangeInto,
  defaultFluidResolver,
  type FindingFlag,
  type MachineRow,
  type PreparedMachine,
  prepareMachine,
  type RawSeries,
  type ResolvedComputeOptions,
} from '@isentrope/compute';
import { ResultCopyBody } from '../queries/results-copy.js';

export interface ComputeTask {
  readonly machine: MachineRow;
  readonly samples: ReadonlyMap<number, RawSeries>;
  readonly fromMs: number;
  readonly toMs: number;
  readonly options: ResolvedComputeOptions;
  /** The flag intervals of the machine's stored instrument findings. */
  readonly findings: readonly FindingFlag[];
}

export interface ComputeTaskResult {
  /** The COPY body: a view at the start of a buffer of its own, which is moved to the main thread. */
  readonly body: Uint8Array;
  readonly rows: number;
}

/** Prepared machines by id and configuration, so a worker prepares each machine once. */
const prepared = new Map<string, PreparedMachine>();

export function runComputeTask(task: ComputeTask): ComputeTaskResult {
  const key = `${task.machine.id}:${JSON.stringify(task.machine)}`;
  let machine = prepared.get(key);
  if (machine === undefined) {
    machine = prepareMachine(task.machine, defaultFluidResolver);
    prepared.set(key, machine);
  }
  const out = new ResultCopyBody(
    task.machine.id,
    task.fromMs,
    task.toMs,
    Math.ceil((task.toMs - task.fromMs) / task.options.stepMs),
  );
  computeRangeInto(
    machine,
    task.samples,
    task.fromMs,
    task.toMs,
    task.options,
    (row) => out.add(row),
    task.findings,
  );
  // The encoder's buffer belongs to this task alone, so it is moved back whole, not copied.
  return { body: out.finish(), rows: out.rows };
}
