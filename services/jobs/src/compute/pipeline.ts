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
  alignTags,
  detectSteadyState,
  flagNames,
  type SteadyTagInput,
  type TagColumns,
  type TagValidation,
  VALID_BAD_QUALITY,
  VALID_MISSING,
  VALID_RANGE,
  VALID_SPIKE,
  VALID_STALE,
  VALID_STUCK,
  validateAligned,
} from '@isentrope/monitor';
import {
  evaluateMachine,
  evaluateMachineWithUncertainty,
  INSTRUMENT_FAULT_FLAGS,
  type MachineResult,
  type MachineUncertainties,
  normalVolumeFlowToMassFlow,
  ThermoError,
} from '@isentrope/thermo';
import { JobsError } from '../errors.js';
import type { PreparedMachine, PreparedTag } from './config.js';
import {
  combine,
  IN_ELECTRICAL_POWER,
  IN_MASS_FLOW,
  IN_P_IN,
  IN_P_OUT,
  IN_SHAFT_POWER,
  IN_T_IN,
  IN_T_OUT,
  IN_VOLUME_FLOW,
  type Linearisation,
  linearise,
  type ModelTemplate,
  machineInput,
  maskOf,
  N_INPUTS,
  N_OUTPUTS,
  OUT_ETA,
  OUT_ETA_FAN,
  OUT_ETA_HYDRAULIC,
  OUT_ETA_POLY,
  OUT_POWER,
  OUT_SGEN,
  OUT_WORK,
  reflag,
} from './linearise.js';

/** Raw samples of one tag, sorted by time: times [ms], values [tag unit], quality codes as stored. */
export interface RawSeries {
  readonly t: ArrayLike<number>;
  readonly value: ArrayLike<number>;
  readonly quality: ArrayLike<number>;
}

export interface ComputeOptions {
  /** Grid step [ms]; default 60 000. `gridMs` is the same setting under its public name. */
  readonly stepMs?: number;
  /** Grid step [ms] (results at multiples of it); default 60 000. */
  readonly gridMs?: number;
  /** Longest hold of a sample [ms]; default 5 steps. */
  readonly maxAgeMs?: number;
  /** Segment length [ms], a multiple of the step; default one hour, or 60 steps when longer. */
  readonly segmentMs?: number;
  /** Grid points computed before a segment (filter warm-up, stuck window); default 60. */
  readonly lookbackPoints?: number;
  /** Trailing window of the stuck-transmitter test [points]; default 30. */
  readonly stuckWindow?: number;
  /** Half window of the spike test [points]; default 5; also the lookahead. */
  readonly spikeHalfWindow?: number;
  /**
   * Uncertainty propagation: 'segment' (default) evaluates the GUM sensitivity coefficients once
   * per operating point of a segment (see linearise.ts); 'point' runs the full numerical GUM at
   * every point (2n + 1 model evaluations each), the reference the segment form is tested against.
   */
  readonly gum?: 'segment' | 'point';
  /** Relative distance in any input beyond which a new linearisation point is taken; default 0.05. */
  readonly relinearise?: number;
}

export interface ResolvedComputeOptions {
  readonly stepMs: number;
  readonly maxAgeMs: number;
  readonly segmentMs: number;
  readonly lookbackPoints: number;
  readonly stuckWindow: number;
  readonly spikeHalfWindow: number;
  readonly gum: 'segment' | 'point';
  readonly relinearise: number;
}

export function resolveComputeOptions(o: ComputeOptions = {}): ResolvedComputeOptions {
  if (o.gridMs !== undefined && o.stepMs !== undefined && o.gridMs !== o.stepMs)
    throw new JobsError('JOBS_BAD_CONFIG', `gridMs ${o.gridMs} and stepMs ${o.stepMs} disagree`, {
      gridMs: o.gridMs,
      stepMs: o.stepMs,
    });
  const stepMs = o.gridMs ?? o.stepMs ?? 60_000;
  // A coarse grid keeps segments of 60 points, so the lookback stays in proportion to the output.
  const segmentMs = o.segmentMs ?? Math.max(3_600_000, 60 * stepMs);
  if (!(stepMs > 0) || !Number.isInteger(stepMs) || segmentMs % stepMs !== 0)
    throw new JobsError(
      'JOBS_BAD_CONFIG',
      `segmentMs ${segmentMs} must be a positive multiple of stepMs ${stepMs}`,
      {
        stepMs,
        segmentMs,
      },
    );
  const relinearise = o.relinearise ?? 0.05;
  if (!(relinearise >= 0))
    throw new JobsError('JOBS_BAD_CONFIG', `relinearise ${relinearise} must be >= 0`, { relinearise });
  return {
    stepMs,
    maxAgeMs: o.maxAgeMs ?? 5 * stepMs,
    segmentMs,
    lookbackPoints: o.lookbackPoints ?? 60,
    stuckWindow: o.stuckWindow ?? 30,
    spikeHalfWindow: o.spikeHalfWindow ?? 5,
    gum: o.gum ?? 'segment',
    relinearise,
  };
}

/** One row of the results table (SI; see migrations/0002_timeseries.sql). */
export interface ResultRow {
  readonly machineId: number;
  /** Grid interval start [ms]. */
  readonly time: number;
  readonly pIn: number | null;
  readonly tIn: number | null;
  readonly hIn: number | null;
  readonly sIn: number | null;
  readonly pOut: number | null;
  readonly tOut: number | null;
  readonly hOut: number | null;
  readonly sOut: number | null;
  readonly tOutS: number | null;
  readonly hOutS: number | null;
  readonly massFlow: number | null;
  readonly efficiency: number | null;
  readonly uEfficiency: number | null;
  readonly polytropicEfficiency: number | null;
  readonly uPolytropicEfficiency: number | null;
  readonly specificWork: number | null;
  readonly uSpecificWork: number | null;
  readonly power: number | null;
  readonly uPower: number | null;
  readonly entropyGeneration: number | null;
  readonly uEntropyGeneration: number | null;
  readonly operatingPoint: number | null;
  readonly steady: boolean;
  /** Notes ("not-steady", "missing:massFlow") and instrument faults, the latter prefixed "fault:". */
  readonly flags: readonly string[];
  readonly valid: boolean;
}

/** Instrument-fault flags carry this prefix, so they stay apart from notes on the figures. */
export const FAULT_PREFIX = 'fault:';

/**
 * |p_out/p_in - 1| below which the machine counts as stopped (common practice, no source): 2 %
 * for turbines, compressors and pumps; fans run on a pressure rise of a few kPa (a ratio of
 * 1.01 to 1.05), so for them 0.2 % (about 2 mbar at atmospheric pressure).
 */
const MIN_RUNNING_RATIO = 0.02;
const MIN_RUNNING_RATIO_FAN = 0.002;
/** Mass flow below this fraction of the rated flow: stopped (common practice, no source). */
const MIN_RUNNING_FLOW = 0.05;

function fin(v: number | undefined): number | null {
  return v !== undefined && Number.isFinite(v) ? v : null;
}

/**
 * Stored quality (the OPC DA quality byte, as services/ingest and packages/store write it: bits 7-6
 * 11 good, 01 uncertain, 00 or 10 bad; OPC Foundation, Data Access Custom Interface Standard 3.0,
 * 6.8) to the alignment's codes (0 good, 1 uncertain, 2 bad). Substatus and limit bits do not
 * change the class; a code that is not a non-negative integer counts as bad.
 */
export function alignQuality(stored: number): number {
  if (!Number.isInteger(stored) || stored < 0) return 2;
  const bits = stored & 0xc0;
  return bits === 0xc0 ? 0 : bits === 0x40 ? 1 : 2;
}

function toColumns(tag: PreparedTag, series: RawSeries | undefined): TagColumns {
  if (series === undefined) return { role: tag.role, t: new Float64Array(0), value: new Float64Array(0) };
  const n = series.t.length;
  const value = new Float64Array(n);
  const quality = new Uint8Array(n);
  for (let i = 0; i < n; i++) {
    // Gauge readings stay gauge here [Pa]; the ambient is added per grid point.
    value[i] = tag.intercept + tag.slope * (series.value[i] as number);
    quality[i] = alignQuality(series.quality[i] as number);
  }
  return { role: tag.role, t: series.t, value, quality };
}

/** Point status on the grid, from the inputs alone. */
const ST_MISSING = 0; // a pressure or temperature is missing: no model
const ST_STOPPED = 1; // not running: no model
const ST_REVERSED = 2; // pressure change against the machine kind: an instrument fault, no model
const ST_MODEL = 3; // the machine model runs

/** A whole range aligned once: SI inputs, their uncertainties and a status per grid point. */
interface Chunk {
  readonly machine: PreparedMachine;
  readonly template: ModelTemplate;
  readonly startMs: number;
  readonly aligned: ReturnType<typeof alignTags>;
  /** Absolute SI values per role (gauge pressures plus the ambient). */
  readonly si: ReadonlyMap<string, Float64Array>;
  /** Model inputs per point, N_INPUTS slots each [SI]; NaN = absent. */
  readonly x: Float64Array;
  /** Standard uncertainty of each input per point [SI]; 0 = none stated. */
  readonly u: Float64Array;
  readonly status: Uint8Array;
}

const ROLE_SLOTS: readonly (readonly [string, number])[] = [
  ['inletPressure', IN_P_IN],
  ['inletTemperature', IN_T_IN],
  ['outletPressure', IN_P_OUT],
  ['outletTemperature', IN_T_OUT],
];

function prepareChunk(
  machine: PreparedMachine,
  samples: ReadonlyMap<number, RawSeries>,
  startMs: number,
  endMs: number,
  o: ResolvedComputeOptions,
): Chunk {
  const tags = [...machine.tags.values()];
  const columns = tags.map((tag) => toColumns(tag, samples.get(tag.id)));
  if (machine.barometer !== undefined)
    columns.push(toColumns({ ...machine.barometer, role: 'barometer' }, samples.get(machine.barometer.id)));
  const aligned = alignTags(columns, { startMs, endMs, stepMs: o.stepMs, maxAgeMs: o.maxAgeMs });
  const n = aligned.t.length;
  const baro = aligned.tags.get('barometer')?.value;
  const fixedAmbient = machine.ambientPressure ?? Number.NaN;
  const si = new Map<string, Float64Array>();
  for (const tag of tags) {
    const a = (aligned.tags.get(tag.role) as AlignedTag).value;
    if (!tag.gauge) {
      si.set(tag.role, a);
      continue;
    }
    // Ambient pressure per point [Pa] for gauge tags: the barometer when the site has one.
    const abs = new Float64Array(n);
    for (let i = 0; i < n; i++)
      abs[i] = (a[i] as number) + (baro !== undefined ? (baro[i] as number) : fixedAmbient);
    si.set(tag.role, abs);
  }

  const x = new Float64Array(n * N_INPUTS).fill(Number.NaN);
  const u = new Float64Array(n * N_INPUTS);
  const status = new Uint8Array(n);
  // Uncertainty from the reading in the tag unit (a percent of reading follows it; gauge stays gauge).
  // The aligned (tag-unit-scaled) column of each role, looked up once rather than per point.
  const alignedOf = new Map<string, Float64Array>();
  for (const tag of tags) alignedOf.set(tag.role, (aligned.tags.get(tag.role) as AlignedTag).value);
  const uOf = (tag: PreparedTag, i: number): number => {
    const raw = (((alignedOf.get(tag.role) as Float64Array)[i] as number) - tag.intercept) / tag.slope;
    const ui = tag.uncertaintySI(raw);
    return ui > 0 && Number.isFinite(ui) ? ui : 0;
  };
  const colOf = (role: string): Float64Array | undefined => si.get(role);
  const pIn = colOf('inletPressure') as Float64Array;
  const tIn = colOf('inletTemperature') as Float64Array;
  const pOut = colOf('outletPressure') as Float64Array;
  const tOut = colOf('outletTemperature') as Float64Array;
  const mCol = colOf('massFlow');
  const qCol = colOf('volumeFlow');
  const wCol = colOf('shaftPower');
  const eCol = colOf('electricalPower');
  const qTag = machine.tags.get('volumeFlow');
  let molarMass: number | undefined;
  if (mCol === undefined && qTag?.normalVolume !== undefined) {
    const mm: unknown = (machine.fluid as unknown as Readonly<Record<string, unknown>>).molarMass;
    if (typeof mm !== 'number')
      throw new JobsError(
        'JOBS_BAD_CONFIG',
        `machine ${machine.row.slug}: a normal volume flow needs a gas with a molar mass`,
        { machine: machine.row.slug, unit: qTag.unit },
      );
    molarMass = mm;
  }
  const kind = machine.row.kind;
  const mRated = machine.ratedMassFlow;
  const minRatio = kind === 'fan' ? MIN_RUNNING_RATIO_FAN : MIN_RUNNING_RATIO;
  const driverEfficiency = machine.row.driverEfficiency ?? undefined;
  const tagOf = (role: string): PreparedTag => machine.tags.get(role) as PreparedTag;
  const slotTags = ROLE_SLOTS.map(([role, slot]) => [tagOf(role), slot] as const);
  for (let i = 0; i < n; i++) {
    const a = pIn[i] as number;
    const b = tIn[i] as number;
    const c = pOut[i] as number;
    const d = tOut[i] as number;
    if (!Number.isFinite(a) || !Number.isFinite(b) || !Number.isFinite(c) || !Number.isFinite(d)) continue;
    const o8 = i * N_INPUTS;
    x[o8 + IN_P_IN] = a;
    x[o8 + IN_T_IN] = b;
    x[o8 + IN_P_OUT] = c;
    x[o8 + IN_T_OUT] = d;
    // At rest (no pressure change worth the name) there is no efficiency to judge.
    if (Math.abs(c / a - 1) < minRatio) {
      status[i] = ST_STOPPED;
      continue;
    }
    const m = mCol?.[i];
    if (mRated !== undefined && m !== undefined && Number.isFinite(m) && m < MIN_RUNNING_FLOW * mRated) {
      status[i] = ST_STOPPED;
      continue;
    }
    // A driven machine cannot lower the pressure (nor a turbine raise it): a transmitter is wrong,
    // most often a gauge reading taken as absolute or the other way round.
    if (kind === 'turbine' ? c > a : c < a) {
      status[i] = ST_REVERSED;
      continue;
    }
    status[i] = ST_MODEL;
    for (let k = 0; k < slotTags.length; k++) {
      const [tag, slot] = slotTags[k] as readonly [PreparedTag, number];
      u[o8 + slot] = uOf(tag, i);
    }
    if (m !== undefined && Number.isFinite(m)) {
      x[o8 + IN_MASS_FLOW] = m;
      u[o8 + IN_MASS_FLOW] = uOf(tagOf('massFlow'), i);
    } else if (mCol === undefined && qCol !== undefined && qTag !== undefined) {
      const q = qCol[i] as number;
      if (Number.isFinite(q)) {
        if (molarMass !== undefined && qTag.normalVolume !== undefined) {
          const mq = normalVolumeFlowToMassFlow(q, molarMass, qTag.normalVolume);
          x[o8 + IN_MASS_FLOW] = mq;
          // Linear in q: u(m) = u(q) m / q.
          u[o8 + IN_MASS_FLOW] = (uOf(qTag, i) * mq) / q;
        } else {
          x[o8 + IN_VOLUME_FLOW] = q;
          u[o8 + IN_VOLUME_FLOW] = uOf(qTag, i);
        }
      }
    }
    const w = wCol?.[i];
    if (w !== undefined && Number.isFinite(w)) {
      x[o8 + IN_SHAFT_POWER] = w;
      u[o8 + IN_SHAFT_POWER] = uOf(tagOf('shaftPower'), i);
    } else if (driverEfficiency !== undefined) {
      const e = eCol?.[i];
      if (e !== undefined && Number.isFinite(e)) {
        x[o8 + IN_ELECTRICAL_POWER] = e;
        u[o8 + IN_ELECTRICAL_POWER] = uOf(tagOf('electricalPower'), i);
      }
    }
    // Any uncertainty that came out non-finite is left out, as the per-point GUM leaves it out.
    for (let k = 0; k < N_INPUTS; k++) if (!Number.isFinite(u[o8 + k] as number)) u[o8 + k] = 0;
  }
  return {
    machine,
    template: { kind, fluid: machine.fluid, driverEfficiency },
    startMs,
    aligned,
    si,
    x,
    u,
    status,
  };
}

/**
 * Results for the grid points in [fromMs, toMs) (multiples of the step), computed segment by
 * segment (see the module comment). `samples` maps tag id to its raw series and must cover
 * [fromMs - lookback - maxAge, toMs + lookahead).
 */
export function computeRange(
  machine: PreparedMachine,
  samples: ReadonlyMap<number, RawSeries>,
  fromMs: number,
  toMs: number,
  options: ResolvedComputeOptions,
): ResultRow[] {
  const out: ResultRow[] = [];
  computeRangeInto(machine, samples, fromMs, toMs, options, (row) => {
    out.push(row);
  });
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
): void {
  if (!Number.isFinite(fromMs) || !Number.isFinite(toMs) || toMs < fromMs)
    throw new JobsError('JOBS_BAD_RANGE', `bad compute range ${fromMs} to ${toMs} [ms]`, { fromMs, toMs });
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
    if (b > a) computeSegment(chunk, seg, a, b, options, emit);
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

/** A linearisation point, its sensitivities computed on first use. */
interface LinPoint {
  readonly x0: Float64Array;
  readonly u0: Float64Array;
  lin: Linearisation | undefined;
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

/** Median of a scratch array, sorting it in place. */
function medianInPlace(a: Float64Array): number {
  const n = a.length;
  if (n === 0) return Number.NaN;
  a.sort();
  return n % 2 === 1 ? (a[n >> 1] as number) : ((a[(n >> 1) - 1] as number) + (a[n >> 1] as number)) / 2;
}

function computeSegment(
  ch: Chunk,
  segStart: number,
  outFrom: number,
  outTo: number,
  o: ResolvedComputeOptions,
  emit: (row: ResultRow) => void,
): void {
  const { stepMs } = o;
  const machine = ch.machine;
  const idx = (ms: number): number => Math.round((ms - ch.startMs) / stepMs);
  // The grid always runs to the segment's end plus the lookahead (not to outTo), so a point
  // computed in a short incremental run equals the same point computed in a backfill.
  const g0 = idx(segStart - o.lookbackPoints * stepMs);
  const g1 = idx(segStart + o.segmentMs + o.spikeHalfWindow * stepMs);
  const gs = idx(segStart);
  const ia = idx(outFrom);
  const ib = idx(outTo);
  const n = g1 - g0;
  const view = segmentView(ch, g0, g1);
  const tags = [...machine.tags.values()];

  const validations: TagValidation[] = tags.map((tag) => {
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

  // Machine model at the output points; linearisation points chosen walking from the segment start.
  const secondLaw = new Uint8Array(n);
  const impossible = new Uint8Array(n);
  const evals: PointEval[] = new Array(ib - ia);
  let lp = o.gum === 'segment' ? lookbackPoint(ch, g0, gs) : undefined;
  for (let j = gs; j < ib; j++) {
    const st = ch.status[j] as number;
    if (o.gum === 'segment' && st === ST_MODEL) {
      if (lp === undefined || !nearPoint(lp, ch.x, j, o.relinearise)) {
        lp = {
          x0: ch.x.slice(j * N_INPUTS, (j + 1) * N_INPUTS),
          u0: ch.u.slice(j * N_INPUTS, (j + 1) * N_INPUTS),
          lin: undefined,
        };
      }
    }
    if (j < ia) continue;
    const e = evaluatePoint(ch, j, st, lp, o);
    evals[j - ia] = e;
    if (e.secondLaw) secondLaw[j - g0] = 1;
    if (e.impossible) impossible[j - g0] = 1;
  }
  const validation = validateAligned(view, validations, { secondLaw, impossible });
  const steadyInput = machine.keyRoles.map((role) =>
    coarseSteadyInput(role, (ch.si.get(role) as Float64Array).subarray(g0, g1), o.stepMs),
  );
  const steady = detectSteadyState(steadyInput, { valid: validation.valid, t: view.t });

  const tagResults = [...validation.tags];
  for (let j = ia; j < ib; j++) {
    const e = evals[j - ia] as PointEval;
    const i = j - g0;
    const flags: string[] = [];
    for (const [role, tv] of tagResults) {
      const f = tv.flags[i] as number;
      if (f === 0) continue;
      for (const name of flagNames(f & (VALID_MISSING | VALID_STALE))) flags.push(`${name}:${role}`);
      for (const name of flagNames(f & (VALID_BAD_QUALITY | VALID_RANGE | VALID_STUCK | VALID_SPIKE)))
        flags.push(`${FAULT_PREFIX}${name}:${role}`);
    }
    for (const f of e.flags) flags.push(f);
    const isSteady = steady.steady[i] === 1;
    if (!isSteady) flags.push('not-steady');
    // The point's row object is completed in place (one object per point, no copy).
    const row = e.row;
    row.steady = isSteady;
    row.flags = flags;
    row.valid = validation.valid[i] === 1 && e.modelValid;
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

/** A result row while it is being filled (steady, flags and valid are set last). */
type PointRow = { -readonly [K in keyof ResultRow]: ResultRow[K] };

interface PointEval {
  readonly row: PointRow;
  readonly flags: readonly string[];
  readonly modelValid: boolean;
  readonly secondLaw: boolean;
  readonly impossible: boolean;
}

function baseRow(
  machineId: number,
  time: number,
  pIn: number,
  tIn: number,
  pOut: number,
  tOut: number,
): PointRow {
  // Every field in one fixed order, so all rows share one object shape.
  return {
    machineId,
    time,
    pIn: fin(pIn),
    tIn: fin(tIn),
    hIn: null,
    sIn: null,
    pOut: fin(pOut),
    tOut: fin(tOut),
    hOut: null,
    sOut: null,
    tOutS: null,
    hOutS: null,
    massFlow: null,
    efficiency: null,
    uEfficiency: null,
    polytropicEfficiency: null,
    uPolytropicEfficiency: null,
    specificWork: null,
    uSpecificWork: null,
    power: null,
    uPower: null,
    entropyGeneration: null,
    uEntropyGeneration: null,
    operatingPoint: null,
    steady: false,
    flags: NO_FLAGS,
    valid: false,
  };
}

const UNCERTAIN_KEYS: readonly (readonly [number, keyof MachineUncertainties])[] = [
  [IN_P_IN, 'inlet.p'],
  [IN_T_IN, 'inlet.T'],
  [IN_P_OUT, 'outlet.p'],
  [IN_T_OUT, 'outlet.T'],
  [IN_MASS_FLOW, 'massFlow'],
  [IN_VOLUME_FLOW, 'volumeFlow'],
  [IN_SHAFT_POWER, 'shaftPower'],
  [IN_ELECTRICAL_POWER, 'electricalPower'],
];

/** The full per-point GUM of @isentrope/thermo (2n + 1 model evaluations): result and u per OUT_* slot. */
function pointGum(ch: Chunk, j: number, uOut: Float64Array): MachineResult {
  const unc: MachineUncertainties = {};
  const o8 = j * N_INPUTS;
  for (const [slot, key] of UNCERTAIN_KEYS) {
    const ui = ch.u[o8 + slot] as number;
    if (ui > 0 && !Number.isNaN(ch.x[o8 + slot] as number)) unc[key] = { kind: 'absolute', value: ui };
  }
  const { result, uncertainty: u } = evaluateMachineWithUncertainty(machineInput(ch.template, ch.x, o8), unc);
  uOut.fill(Number.NaN);
  uOut[OUT_ETA] = u.isentropicEfficiency ?? Number.NaN;
  uOut[OUT_ETA_POLY] = u.polytropicEfficiency ?? Number.NaN;
  uOut[OUT_WORK] = u.specificWork ?? Number.NaN;
  uOut[OUT_POWER] = u.power ?? Number.NaN;
  uOut[OUT_SGEN] = u.entropyGeneration ?? Number.NaN;
  uOut[OUT_ETA_HYDRAULIC] = u.hydraulicEfficiency ?? Number.NaN;
  uOut[OUT_ETA_FAN] = u.fanEfficiency ?? Number.NaN;
  return result;
}

const uScratch = new Float64Array(N_OUTPUTS);

function evaluatePoint(
  ch: Chunk,
  j: number,
  status: number,
  lp: LinPoint | undefined,
  o: ResolvedComputeOptions,
): PointEval {
  const machine = ch.machine;
  const o8 = j * N_INPUTS;
  const pIn = ch.x[o8 + IN_P_IN] as number;
  const tIn = ch.x[o8 + IN_T_IN] as number;
  const pOut = ch.x[o8 + IN_P_OUT] as number;
  const tOut = ch.x[o8 + IN_T_OUT] as number;
  if (status === ST_MISSING) {
    const col = (role: string): number => ch.si.get(role)?.[j] ?? Number.NaN;
    return {
      row: baseRow(
        machine.row.id,
        ch.aligned.t[j] as number,
        col('inletPressure'),
        col('inletTemperature'),
        col('outletPressure'),
        col('outletTemperature'),
      ),
      flags: NO_FLAGS,
      modelValid: false,
      secondLaw: false,
      impossible: false,
    };
  }
  const base = baseRow(machine.row.id, ch.aligned.t[j] as number, pIn, tIn, pOut, tOut);
  const flags: string[] = [];
  // Gauge/absolute mix-ups are found over time by the instrument step of the alerts tick
  // (services/jobs/src/instrument), not per point here: one point cannot tell them apart.
  if (status === ST_STOPPED) {
    flags.push('not-running');
    return { row: base, flags, modelValid: false, secondLaw: false, impossible: false };
  }
  if (status === ST_REVERSED) {
    flags.push(
      `${FAULT_PREFIX}${machine.row.kind === 'turbine' ? 'outlet-above-inlet' : 'outlet-below-inlet'}`,
    );
    return { row: base, flags, modelValid: false, secondLaw: false, impossible: true };
  }
  const u = uScratch;
  let r: MachineResult;
  try {
    if (o.gum === 'point' || lp === undefined) r = pointGum(ch, j, u);
    else {
      lp.lin ??= linearise(ch.template, lp.x0, lp.u0);
      if (lp.lin.c === undefined) r = pointGum(ch, j, u);
      else {
        r = evaluateMachine(machineInput(ch.template, ch.x, o8));
        combine(lp.lin, ch.u, o8, u);
        r = reflag(r, u);
      }
    }
  } catch (error) {
    if (!(error instanceof ThermoError)) throw error;
    // Readings outside a property model's range: the point has no figures, and says why.
    flags.push(`model-error:${error.code}`);
    return { row: base, flags, modelValid: false, secondLaw: false, impossible: false };
  }
  for (const f of r.flags) flags.push(INSTRUMENT_FAULT_FLAGS.has(f) ? `${FAULT_PREFIX}${f}` : f);
  const power = r.power;
  const op =
    machine.operatingPoint === 'pressureRatio'
      ? pOut / pIn
      : machine.operatingPoint === 'load'
        ? (r.shaftPowerUsed ?? power)
        : r.massFlow;
  // The figure trended as "efficiency". Pumps and fans with a measured power: the power-based
  // efficiency (hydraulic power / shaft power; fan air power with ISO 5801 k_p / shaft power).
  // Their temperature rise is about 1 K, which plant thermometers cannot resolve well enough for
  // the thermodynamic method (ISO 5198 asks for far finer thermometry), so its uncertainty would
  // hide any real loss. Turbines and compressors, or no power tag: the isentropic efficiency.
  const kind = machine.row.kind;
  const hydraulic = kind === 'pump' && r.hydraulicEfficiency !== undefined;
  const fanEta = !hydraulic && kind === 'fan' && r.fanEfficiency !== undefined;
  const primary = hydraulic ? r.hydraulicEfficiency : fanEta ? r.fanEfficiency : r.isentropicEfficiency;
  const primaryU = hydraulic ? OUT_ETA_HYDRAULIC : fanEta ? OUT_ETA_FAN : OUT_ETA;
  // Filled into the point's row object (one object per point).
  base.hIn = r.inlet.h;
  base.sIn = r.inlet.s;
  base.tOut = r.outlet.T;
  base.hOut = r.outlet.h;
  base.sOut = r.outlet.s;
  base.tOutS = r.outletIsentropic.T;
  base.hOutS = r.outletIsentropic.h;
  base.massFlow = fin(r.massFlow);
  base.efficiency = fin(primary);
  base.uEfficiency = uOrNull(u, primary, primaryU);
  base.polytropicEfficiency = fin(r.polytropicEfficiency);
  base.uPolytropicEfficiency = uOrNull(u, r.polytropicEfficiency, OUT_ETA_POLY);
  base.specificWork = fin(r.specificWork);
  base.uSpecificWork = uOrNull(u, r.specificWork, OUT_WORK);
  base.power = fin(power);
  base.uPower = uOrNull(u, power, OUT_POWER);
  base.entropyGeneration = fin(r.entropyGeneration);
  base.uEntropyGeneration = uOrNull(u, r.entropyGeneration, OUT_SGEN);
  base.operatingPoint = fin(op);
  const row = base;
  let noEfficiency = false;
  let secondLaw = false;
  let impossibleFlag = false;
  for (const f of r.flags) {
    if (f === 'no-flow' || f === 'low-head' || f === 'no-work') noEfficiency = true;
    else if (f === 'second-law-violation') secondLaw = true;
    else if (f === 'efficiency-above-one' || f === 'outlet-colder-than-isentropic') impossibleFlag = true;
  }
  return {
    row,
    flags,
    // A machine at rest or without head has no meaningful efficiency (not an instrument fault).
    modelValid: r.valid && primary !== undefined && !noEfficiency,
    secondLaw,
    impossible: impossibleFlag,
  };
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
  const level = Math.abs(medianOfFinite(value));
  const window = Math.max(3, Math.round(3_600_000 / stepMs) + 1);
  return {
    role,
    value,
    cao: { rCrit: Number.POSITIVE_INFINITY, warmup: 1, padPoints: 0 },
    slopeSpread: { window, maxChange: 0.03 * level, maxSpread: 0.015 * level },
  };
}

function medianOfFinite(x: ArrayLike<number>): number {
  const v: number[] = [];
  for (let i = 0; i < x.length; i++) if (Number.isFinite(x[i] as number)) v.push(x[i] as number);
  if (v.length === 0) return Number.NaN;
  v.sort((a, b) => a - b);
  const m = v.length >> 1;
  return v.length % 2 === 1 ? (v[m] as number) : ((v[m - 1] as number) + (v[m] as number)) / 2;
}

const NO_FLAGS: readonly string[] = [];

/** A figure's standard uncertainty from slot k of u, or null when the figure itself is absent. */
function uOrNull(u: Float64Array, v: number | undefined, k: number): number | null {
  return v === undefined || !Number.isFinite(v) ? null : fin(u[k]);
}
