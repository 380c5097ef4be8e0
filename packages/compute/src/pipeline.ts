/**
 * The compute pipeline for one machine, pure: raw samples (tag units) -> SI -> aligned grid ->
 * validation -> steady state -> machine model with GUM uncertainty -> one result row per point.
 *
 * Identical results however the work is split (incremental minute by minute, or a backfill):
 * the grid is cut into fixed segments anchored on absolute time (default one hour, UTC), and the
 * points of a segment are always validated and judged steady on the grid [segment start -
 * lookback, segment end + lookahead). The recursive steady-state filter therefore always starts at
 * the same place, the trailing stuck window and the centred spike window (Hampel) always see the
 * same points, and a point's value depends only on the samples, never on where a run began or
 * ended. A point is computed only once the samples up to its lookahead can have arrived (see the
 * job's horizon).
 *
 * For speed a whole range is aligned in one pass (alignment is pointwise, so a point's aligned
 * value is the same on any grid that holds it) and each segment's validation and steady state run
 * on views of that one grid. The model runs once per running point; its uncertainty comes from
 * sensitivity coefficients evaluated per operating point of the segment (linearise.ts), the
 * linearisation points chosen from the segment's own lookback and points only, so incremental
 * runs and backfills still agree.
 */
import {
  type AlignedTag,
  type alignTags,
  detectSteadyState,
  flagNames,
  median,
  medianInPlace,
  type SteadyTagInput,
  type TagValidation,
  VALID_BAD_QUALITY,
  VALID_MISSING,
  VALID_RANGE,
  VALID_SPIKE,
  VALID_STALE,
  VALID_STUCK,
  validateAligned,
} from '@isentrope/monitor';
import { type Chunk, prepareChunk, ST_MODEL } from './chunk.js';
import { ComputeError } from './errors.js';
import { addInstrumentFlags, FAULT_PREFIX, type FindingFlag } from './findings.js';
import { maskOf, N_INPUTS } from './linearise.js';
import type { PreparedMachine } from './machine.js';
import type { RawSeries, ResolvedComputeOptions, ResultRow } from './options.js';
import { evaluatePoint, type LinPoint, type PointEval } from './point.js';

/**
 * Results for the grid points in [fromMs, toMs) (multiples of the step), computed segment by
 * segment (see the module comment). `samples` maps tag id to its raw series and must cover
 * [fromMs - lookback - maxAge, toMs + lookahead). `findings`: the flag intervals of the machine's
 * stored instrument findings (findingFlags), applied to every row they cover.
 */
export function computeRange(
  machine: PreparedMachine,
  samples: ReadonlyMap<number, RawSeries>,
  fromMs: number,
  toMs: number,
  options: ResolvedComputeOptions,
  findings: readonly FindingFlag[] = [],
): ResultRow[] {
  const out: ResultRow[] = [];
  computeRangeInto(machine, samples, fromMs, toMs, options, (row) => out.push(row), findings);
  return out;
}

/**
 * computeRange handing each row to `emit` as soon as its segment is done, in time order; a
 * caller that encodes rows as they come keeps a segment's rows alive, not a day's (measured:
 * rows kept for a whole chunk outlive the young generation and cost a slow collection each).
 */
export function computeRangeInto(
  machine: PreparedMachine,
  samples: ReadonlyMap<number, RawSeries>,
  fromMs: number,
  toMs: number,
  options: ResolvedComputeOptions,
  emit: (row: ResultRow) => void,
  findings: readonly FindingFlag[] = [],
): void {
  if (!Number.isFinite(fromMs) || !Number.isFinite(toMs) || toMs < fromMs)
    throw new ComputeError('COMPUTE_BAD_RANGE', `bad compute range ${fromMs} to ${toMs} [ms]`, {
      fromMs,
      toMs,
    });
  if (toMs === fromMs) return;
  const { segmentMs, stepMs } = options;
  const first = Math.floor(fromMs / segmentMs) * segmentMs;
  const last = Math.ceil(toMs / segmentMs) * segmentMs;
  const chunk = prepareChunk(
    machine,
    samples,
    first - options.lookbackPoints * stepMs,
    last + options.spikeHalfWindow * stepMs,
    options,
  );
  for (let seg = first; seg < toMs; seg += segmentMs) {
    const a = Math.max(fromMs, seg);
    const b = Math.min(toMs, seg + segmentMs);
    if (b > a) computeSegment(chunk, { segStart: seg, outFrom: a, outTo: b, findings }, options, emit);
  }
}

/** A view of rows [g0, g1) of an aligned grid, with the SI values in place of the aligned ones. */
function segmentView(ch: Chunk, g0: number, g1: number): ReturnType<typeof alignTags> {
  const tags = new Map<string, AlignedTag>();
  for (const [role, a] of ch.aligned.tags) {
    const v = ch.si.get(role) ?? a.value;
    tags.set(role, {
      role,
      value: v.subarray(g0, g1),
      coverage: a.coverage.subarray(g0, g1),
      flags: a.flags.subarray(g0, g1),
      badCount: a.badCount.subarray(g0, g1),
      badTotal: a.badTotal,
    });
  }
  return {
    t: ch.aligned.t.subarray(g0, g1),
    stepMs: ch.aligned.stepMs,
    roles: ch.aligned.roles,
    tags,
    coverage: ch.aligned.coverage.subarray(g0, g1),
  };
}

/**
 * The segment's first linearisation point: the median of each input over the model points of the
 * lookback (the hour before the segment) that carry the same inputs as the last of them. Taken
 * from the lookback so an incremental run, which has not seen the segment's end, finds it too.
 */
function lookbackPoint(ch: Chunk, g0: number, gs: number): LinPoint | undefined {
  let mask = -1;
  for (let j = gs - 1; j >= g0; j--)
    if (ch.status[j] === ST_MODEL) {
      mask = maskAt(ch.x, j);
      break;
    }
  if (mask < 0) return undefined;
  const idx: number[] = [];
  for (let j = g0; j < gs; j++) if (ch.status[j] === ST_MODEL && maskAt(ch.x, j) === mask) idx.push(j);
  const x0 = new Float64Array(N_INPUTS).fill(Number.NaN);
  const u0 = new Float64Array(N_INPUTS);
  const buf = new Float64Array(idx.length);
  for (let k = 0; k < N_INPUTS; k++) {
    // An absent input stays NaN with u = 0, as every point of this mask has it.
    if ((mask & (1 << k)) === 0) continue;
    for (let q = 0; q < idx.length; q++) buf[q] = ch.x[(idx[q] as number) * N_INPUTS + k] as number;
    x0[k] = medianInPlace(buf);
    for (let q = 0; q < idx.length; q++) buf[q] = ch.u[(idx[q] as number) * N_INPUTS + k] as number;
    u0[k] = medianInPlace(buf);
  }
  return { x0, u0, lin: undefined };
}

function maskAt(x: Float64Array, j: number): number {
  return maskOf(x, j * N_INPUTS);
}

/** Validation settings of every model tag over the segment's grid [g0, g1). */
function tagValidations(ch: Chunk, g0: number, g1: number, o: ResolvedComputeOptions): TagValidation[] {
  const machine = ch.machine;
  return [...machine.tags.values()].map((tag) => {
    const toSiBound = (raw: number | undefined): number | undefined =>
      raw === undefined
        ? undefined
        : tag.intercept + tag.slope * raw + (tag.gauge ? (machine.ambientPressure ?? 0) : 0);
    const lo = toSiBound(tag.validMin);
    const hi = toSiBound(tag.validMax);
    // From the segment's own grid, so the threshold never depends on how samples were read.
    const firstRaw = firstFinite((ch.aligned.tags.get(tag.role) as AlignedTag).value.subarray(g0, g1));
    const rawRef = (firstRaw - tag.intercept) / tag.slope;
    return {
      role: tag.role,
      // Always both keys (undefined when absent): one object shape for every tag keeps
      // validateAligned optimised (shapes varying by tag made it deoptimise, measured).
      min: lo !== undefined ? Math.min(lo, hi ?? lo) : undefined,
      max: hi !== undefined ? Math.max(hi, lo ?? hi) : undefined,
      // Every model tag decides validity (a bad outlet temperature spoils the efficiency);
      // steadiness is judged on the key roles only, below.
      key: true,
      // A transmitter frozen on one value while the other key tags move (identical values only,
      // so a quiet but live signal is never called stuck).
      stuck: { window: o.stuckWindow, minStd: 0 },
      // Hampel identifier; a deviation below three instrument uncertainties is never a spike.
      spike: { halfWindow: o.spikeHalfWindow, nSigma: 3, minDeviation: 3 * tag.uncertaintySI(rawRef) },
    };
  });
}

/** The grid indices of one segment: [g0, g1) validated, [gs, ...) the segment, [ia, ib) output. */
interface SegmentGrid {
  readonly g0: number;
  readonly g1: number;
  readonly gs: number;
  readonly ia: number;
  readonly ib: number;
}

/** The machine model at the output points; linearisation points chosen walking from the segment start. */
function evaluateSegment(
  ch: Chunk,
  g: SegmentGrid,
  o: ResolvedComputeOptions,
): { evals: PointEval[]; secondLaw: Uint8Array; impossible: Uint8Array } {
  const secondLaw = new Uint8Array(g.g1 - g.g0);
  const impossible = new Uint8Array(g.g1 - g.g0);
  const evals: PointEval[] = new Array(g.ib - g.ia);
  let lp = o.gum === 'segment' ? lookbackPoint(ch, g.g0, g.gs) : undefined;
  for (let j = g.gs; j < g.ib; j++) {
    const st = ch.status[j] as number;
    if (
      o.gum === 'segment' &&
      st === ST_MODEL &&
      (lp === undefined || !nearPoint(lp, ch.x, j, o.relinearise))
    )
      lp = {
        x0: ch.x.slice(j * N_INPUTS, (j + 1) * N_INPUTS),
        u0: ch.u.slice(j * N_INPUTS, (j + 1) * N_INPUTS),
        lin: undefined,
      };
    if (j < g.ia) continue;
    const e = evaluatePoint(ch, j, st, lp, o);
    evals[j - g.ia] = e;
    if (e.secondLaw) secondLaw[j - g.g0] = 1;
    if (e.impossible) impossible[j - g.g0] = 1;
  }
  return { evals, secondLaw, impossible };
}

/** The validation notes ("missing:<role>") and faults ("fault:spike:<role>") of grid point i. */
function validationFlags(
  tagResults: readonly (readonly [string, { flags: Uint8Array | Uint16Array }])[],
  i: number,
  flags: string[],
): void {
  for (const [role, tv] of tagResults) {
    const f = tv.flags[i] as number;
    if (f === 0) continue;
    for (const name of flagNames(f & (VALID_MISSING | VALID_STALE))) flags.push(`${name}:${role}`);
    for (const name of flagNames(f & (VALID_BAD_QUALITY | VALID_RANGE | VALID_STUCK | VALID_SPIKE)))
      flags.push(`${FAULT_PREFIX}${name}:${role}`);
  }
}

/** One segment's output points, [outFrom, outTo) within [segStart, segStart + segmentMs). */
interface SegmentSpan {
  readonly segStart: number;
  readonly outFrom: number;
  readonly outTo: number;
  readonly findings: readonly FindingFlag[];
}

function computeSegment(
  ch: Chunk,
  span: SegmentSpan,
  o: ResolvedComputeOptions,
  emit: (row: ResultRow) => void,
): void {
  const idx = (ms: number): number => Math.round((ms - ch.startMs) / o.stepMs);
  // The grid always runs to the segment's end plus the lookahead (not to outTo), so a point
  // computed in a short incremental run equals the same point computed in a backfill.
  const g: SegmentGrid = {
    g0: idx(span.segStart - o.lookbackPoints * o.stepMs),
    g1: idx(span.segStart + o.segmentMs + o.spikeHalfWindow * o.stepMs),
    gs: idx(span.segStart),
    ia: idx(span.outFrom),
    ib: idx(span.outTo),
  };
  const view = segmentView(ch, g.g0, g.g1);
  const { evals, secondLaw, impossible } = evaluateSegment(ch, g, o);
  const validation = validateAligned(view, tagValidations(ch, g.g0, g.g1, o), { secondLaw, impossible });
  const steadyInput = ch.machine.keyRoles.map((role) =>
    coarseSteadyInput(role, (ch.si.get(role) as Float64Array).subarray(g.g0, g.g1), o.stepMs),
  );
  const steady = detectSteadyState(steadyInput, { valid: validation.valid, t: view.t });
  const tagResults = [...validation.tags];
  for (let j = g.ia; j < g.ib; j++) {
    const e = evals[j - g.ia] as PointEval;
    const i = j - g.g0;
    const flags: string[] = [];
    validationFlags(tagResults, i, flags);
    for (const f of e.flags) flags.push(f);
    const isSteady = steady.steady[i] === 1;
    if (!isSteady) flags.push('not-steady');
    // The point's row object is completed in place (one object per point, no copy).
    const row = e.row;
    const fault = addInstrumentFlags(row.time, row.pIn, row.pOut, span.findings, flags);
    row.steady = isSteady;
    row.flags = flags;
    row.valid = validation.valid[i] === 1 && e.modelValid && !fault;
    emit(row);
  }
}

function nearPoint(lp: LinPoint, x: Float64Array, j: number, tolerance: number): boolean {
  const o = j * N_INPUTS;
  for (let k = 0; k < N_INPUTS; k++) {
    const a = lp.x0[k] as number;
    const b = x[o + k] as number;
    if (Number.isNaN(a) !== Number.isNaN(b)) return false;
    if (!Number.isNaN(a) && Math.abs(b - a) > tolerance * Math.abs(a)) return false;
  }
  return true;
}

function firstFinite(a: ArrayLike<number> | undefined): number {
  if (a === undefined) return 0;
  for (let i = 0; i < a.length; i++) if (Number.isFinite(a[i] as number)) return a[i] as number;
  return 0;
}

/**
 * Steady-state test of one key tag. On the 1-minute grid (and finer): the Cao and Rhinehart (1995)
 * R-statistic. Its filters assume nearly independent noise between points, which a coarse grid
 * (a history computed every 5 or 15 minutes) does not give: slow process swings then read as
 * transients everywhere. So on a grid coarser than a minute the windowed slope-and-spread test
 * judges instead, over the trailing hour: a change of at most 3 % and a residual spread of at
 * most 1.5 % of the tag's median level in the segment (common practice, no source).
 */
export function coarseSteadyInput(role: string, value: Float64Array, stepMs: number): SteadyTagInput {
  if (stepMs <= 60_000) return { role, value };
  const level = Math.abs(median(value));
  const window = Math.max(3, Math.round(3_600_000 / stepMs) + 1);
  return {
    role,
    value,
    cao: { rCrit: Number.POSITIVE_INFINITY, warmup: 1, padPoints: 0 },
    slopeSpread: { window, maxChange: 0.03 * level, maxSpread: 0.015 * level },
  };
}
