/**
 * The compute pipeline for one machine, pure: raw samples (tag units) -> SI -> aligned grid ->
 * validation -> steady state -> machine model with GUM uncertainty -> one result row per point.
 *
 * Identical results however the work is split (incremental minute by minute, or a backfill):
 * the grid is cut into fixed segments anchored on absolute time (default one hour, UTC), and the
 * points of a segment are always computed on the grid [segment start - lookback, segment end +
 * lookahead). The recursive steady-state filter therefore always starts at the same place, the
 * trailing stuck window and the centred spike window (Hampel) always see the same points, and a
 * point's value depends only on the samples, never on where a run began or ended. A point is
 * computed only once the samples up to its lookahead can have arrived (see the job's horizon).
 */
import {
  type AlignedTag,
  alignTags,
  detectSteadyState,
  flagNames,
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
  evaluateMachineWithUncertainty,
  INSTRUMENT_FAULT_FLAGS,
  type MachineInput,
  type MachineUncertainties,
  normalVolumeFlowToMassFlow,
  ThermoError,
} from '@isentrope/thermo';
import { JobsError } from '../errors.js';
import type { PreparedMachine, PreparedTag } from './config.js';

/** Raw samples of one tag, sorted by time: times [ms], values [tag unit], quality codes as stored. */
export interface RawSeries {
  readonly t: ArrayLike<number>;
  readonly value: ArrayLike<number>;
  readonly quality: ArrayLike<number>;
}

export interface ComputeOptions {
  /** Grid step [ms]; default 60 000. */
  readonly stepMs?: number;
  /** Longest hold of a sample [ms]; default 5 steps. */
  readonly maxAgeMs?: number;
  /** Segment length [ms], a multiple of the step; default one hour. */
  readonly segmentMs?: number;
  /** Grid points computed before a segment (filter warm-up, stuck window); default 60. */
  readonly lookbackPoints?: number;
  /** Trailing window of the stuck-transmitter test [points]; default 30. */
  readonly stuckWindow?: number;
  /** Half window of the spike test [points]; default 5; also the lookahead. */
  readonly spikeHalfWindow?: number;
}

export interface ResolvedComputeOptions {
  readonly stepMs: number;
  readonly maxAgeMs: number;
  readonly segmentMs: number;
  readonly lookbackPoints: number;
  readonly stuckWindow: number;
  readonly spikeHalfWindow: number;
}

export function resolveComputeOptions(o: ComputeOptions = {}): ResolvedComputeOptions {
  const stepMs = o.stepMs ?? 60_000;
  const segmentMs = o.segmentMs ?? 3_600_000;
  if (!(stepMs > 0) || segmentMs % stepMs !== 0)
    throw new JobsError(
      'JOBS_BAD_CONFIG',
      `segmentMs ${segmentMs} must be a positive multiple of stepMs ${stepMs}`,
      {
        stepMs,
        segmentMs,
      },
    );
  return {
    stepMs,
    maxAgeMs: o.maxAgeMs ?? 5 * stepMs,
    segmentMs,
    lookbackPoints: o.lookbackPoints ?? 60,
    stuckWindow: o.stuckWindow ?? 30,
    spikeHalfWindow: o.spikeHalfWindow ?? 5,
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

/** Fraction of an atmosphere within which a reading "one atmosphere off" is suspected (common practice, no source). */
const GAUGE_SUSPECT_TOLERANCE = 0.15;
/** |p_out/p_in - 1| below which the machine counts as stopped (common practice, no source). Fans run on less: see report. */
const MIN_RUNNING_RATIO = 0.02;
/** Mass flow below this fraction of the rated flow: stopped (common practice, no source). */
const MIN_RUNNING_FLOW = 0.05;

function fin(v: number | undefined): number | null {
  return v !== undefined && Number.isFinite(v) ? v : null;
}

function toColumns(tag: PreparedTag, series: RawSeries | undefined): TagColumns {
  if (series === undefined) return { role: tag.role, t: new Float64Array(0), value: new Float64Array(0) };
  const n = series.t.length;
  const value = new Float64Array(n);
  const quality = new Uint8Array(n);
  for (let i = 0; i < n; i++) {
    // Gauge readings stay gauge here [Pa]; the ambient is added per grid point.
    value[i] = tag.intercept + tag.slope * (series.value[i] as number);
    // Stored code 0 is good; any other code is taken as bad (QUALITY_BAD = 2).
    quality[i] = (series.quality[i] as number) === 0 ? 0 : 2;
  }
  return { role: tag.role, t: series.t, value, quality };
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
  if (!Number.isFinite(fromMs) || !Number.isFinite(toMs) || toMs < fromMs)
    throw new JobsError('JOBS_BAD_RANGE', `bad compute range ${fromMs} to ${toMs} [ms]`, { fromMs, toMs });
  const out: ResultRow[] = [];
  const { segmentMs } = options;
  for (let seg = Math.floor(fromMs / segmentMs) * segmentMs; seg < toMs; seg += segmentMs) {
    const a = Math.max(fromMs, seg);
    const b = Math.min(toMs, seg + segmentMs);
    if (b > a) out.push(...computeSegment(machine, samples, seg, a, b, options));
  }
  return out;
}

function computeSegment(
  machine: PreparedMachine,
  samples: ReadonlyMap<number, RawSeries>,
  segStart: number,
  outFrom: number,
  outTo: number,
  o: ResolvedComputeOptions,
): ResultRow[] {
  const { stepMs } = o;
  const gridStart = segStart - o.lookbackPoints * stepMs;
  // The grid always runs to the segment's end plus the lookahead (not to outTo), so a point
  // computed in a short incremental run equals the same point computed in a backfill.
  const gridEnd = segStart + o.segmentMs + o.spikeHalfWindow * stepMs;
  const tags = [...machine.tags.values()];
  const columns = tags.map((tag) => toColumns(tag, samples.get(tag.id)));
  if (machine.barometer !== undefined)
    columns.push(toColumns({ ...machine.barometer, role: 'barometer' }, samples.get(machine.barometer.id)));
  const aligned = alignTags(columns, { startMs: gridStart, endMs: gridEnd, stepMs, maxAgeMs: o.maxAgeMs });
  const n = aligned.t.length;
  const iFrom = Math.round((outFrom - gridStart) / stepMs);
  const iTo = Math.round((outTo - gridStart) / stepMs);

  // Ambient pressure per point [Pa] for gauge tags: the barometer when the site has one.
  const baro = aligned.tags.get('barometer');
  const ambient = (i: number): number =>
    baro !== undefined ? (baro.value[i] as number) : (machine.ambientPressure ?? Number.NaN);
  const si = new Map<string, Float64Array>();
  for (const tag of tags) {
    const a = aligned.tags.get(tag.role) as AlignedTag;
    if (!tag.gauge) {
      si.set(tag.role, a.value);
      continue;
    }
    const abs = new Float64Array(n);
    for (let i = 0; i < n; i++) abs[i] = (a.value[i] as number) + ambient(i);
    si.set(tag.role, abs);
  }
  const siAligned = {
    ...aligned,
    tags: new Map([...aligned.tags].map(([role, a]) => [role, { ...a, value: si.get(role) ?? a.value }])),
  };

  const validations: TagValidation[] = tags.map((tag) => {
    const toSiBound = (raw: number | undefined): number | undefined =>
      raw === undefined
        ? undefined
        : tag.intercept + tag.slope * raw + (tag.gauge ? (machine.ambientPressure ?? 0) : 0);
    const lo = toSiBound(tag.validMin);
    const hi = toSiBound(tag.validMax);
    // From the segment's own grid, so the threshold never depends on how samples were read.
    const firstRaw = firstFinite((aligned.tags.get(tag.role) as AlignedTag).value);
    const rawRef = (firstRaw - tag.intercept) / tag.slope;
    return {
      role: tag.role,
      ...(lo !== undefined ? { min: Math.min(lo, hi ?? lo) } : {}),
      ...(hi !== undefined ? { max: Math.max(hi, lo ?? hi) } : {}),
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

  // Machine model at the output points.
  const secondLaw = new Uint8Array(n);
  const impossible = new Uint8Array(n);
  const evals: (ReturnType<typeof evaluatePoint> | undefined)[] = new Array(n);
  for (let i = iFrom; i < iTo; i++) {
    const e = evaluatePoint(machine, si, aligned.tags, i);
    evals[i] = e;
    if (e.secondLaw) secondLaw[i] = 1;
    if (e.impossible) impossible[i] = 1;
  }
  const validation = validateAligned(siAligned, validations, { secondLaw, impossible });
  const steadyInput = machine.keyRoles.map((role) => ({ role, value: si.get(role) as Float64Array }));
  const steady = detectSteadyState(steadyInput, { valid: validation.valid });

  const rows: ResultRow[] = [];
  for (let i = iFrom; i < iTo; i++) {
    const e = evals[i] as ReturnType<typeof evaluatePoint>;
    const flags: string[] = [];
    for (const [role, tv] of validation.tags) {
      const f = tv.flags[i] as number;
      if (f === 0) continue;
      for (const name of flagNames(f & (VALID_MISSING | VALID_STALE))) flags.push(`${name}:${role}`);
      for (const name of flagNames(f & (VALID_BAD_QUALITY | VALID_RANGE | VALID_STUCK | VALID_SPIKE)))
        flags.push(`${FAULT_PREFIX}${name}:${role}`);
    }
    flags.push(...e.flags);
    const isSteady = steady.steady[i] === 1;
    if (!isSteady) flags.push('not-steady');
    const valid = validation.valid[i] === 1 && e.modelValid;
    rows.push({
      ...e.row,
      machineId: machine.row.id,
      time: aligned.t[i] as number,
      steady: isSteady,
      valid,
      flags,
    });
  }
  return rows;
}

function firstFinite(a: ArrayLike<number> | undefined): number {
  if (a === undefined) return 0;
  for (let i = 0; i < a.length; i++) if (Number.isFinite(a[i] as number)) return a[i] as number;
  return 0;
}

type PointRow = Omit<ResultRow, 'machineId' | 'time' | 'steady' | 'valid' | 'flags'>;

const EMPTY: PointRow = {
  pIn: null,
  tIn: null,
  hIn: null,
  sIn: null,
  pOut: null,
  tOut: null,
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
};

function evaluatePoint(
  machine: PreparedMachine,
  si: ReadonlyMap<string, Float64Array>,
  aligned: ReadonlyMap<string, AlignedTag>,
  i: number,
): { row: PointRow; flags: string[]; modelValid: boolean; secondLaw: boolean; impossible: boolean } {
  const v = (role: string): number | undefined => {
    const a = si.get(role);
    const x = a?.[i];
    return x !== undefined && Number.isFinite(x) ? x : undefined;
  };
  const pIn = v('inletPressure');
  const tIn = v('inletTemperature');
  const pOut = v('outletPressure');
  const tOut = v('outletTemperature');
  const base: PointRow = { ...EMPTY, pIn: fin(pIn), tIn: fin(tIn), pOut: fin(pOut), tOut: fin(tOut) };
  if (pIn === undefined || tIn === undefined || pOut === undefined || tOut === undefined)
    return { row: base, flags: [], modelValid: false, secondLaw: false, impossible: false };

  const flags: string[] = [];
  const kind = machine.row.kind;
  // Gauge/absolute mix-up: a pressure about one atmosphere off its rated value (common practice, no source).
  for (const [role, p, rated] of [
    ['inletPressure', pIn, machine.ratedInletPressure],
    ['outletPressure', pOut, machine.ratedOutletPressure],
  ] as const) {
    if (rated === undefined) continue;
    const off = Math.abs(Math.abs(p - rated) - 101_325);
    if (off < GAUGE_SUSPECT_TOLERANCE * 101_325) flags.push(`${FAULT_PREFIX}gauge-absolute-suspect:${role}`);
  }
  // At rest (no pressure change worth the name) there is no efficiency to judge: a machine
  // within 2 % of a unit pressure ratio is taken as stopped (common practice, no source).
  if (Math.abs(pOut / pIn - 1) < MIN_RUNNING_RATIO) {
    flags.push('not-running');
    return { row: base, flags, modelValid: false, secondLaw: false, impossible: false };
  }
  const mRated = machine.ratedMassFlow;
  const m = v('massFlow');
  if (mRated !== undefined && m !== undefined && m < MIN_RUNNING_FLOW * mRated) {
    flags.push('not-running');
    return { row: base, flags, modelValid: false, secondLaw: false, impossible: false };
  }
  const reversed = kind === 'turbine' ? pOut > pIn : pOut < pIn;
  if (reversed) {
    // A driven machine cannot lower the pressure (nor a turbine raise it): a transmitter is wrong,
    // most often a gauge reading taken as absolute or the other way round.
    flags.push(`${FAULT_PREFIX}${kind === 'turbine' ? 'outlet-above-inlet' : 'outlet-below-inlet'}`);
    return { row: base, flags, modelValid: false, secondLaw: false, impossible: true };
  }

  const tag = (role: string): PreparedTag | undefined => machine.tags.get(role);
  const rawOf = (role: string): number => {
    const t = tag(role) as PreparedTag;
    const a = aligned.get(role) as AlignedTag;
    // Back to the tag unit for a percent-of-reading uncertainty (gauge readings stay gauge).
    return ((a.value[i] as number) - t.intercept) / t.slope;
  };
  const unc: Record<string, { kind: 'absolute'; value: number }> = {};
  const addU = (key: string, role: string, scale = 1): void => {
    const t = tag(role);
    if (t === undefined) return;
    const u = t.uncertaintySI(rawOf(role)) * scale;
    if (u > 0 && Number.isFinite(u)) unc[key] = { kind: 'absolute', value: u };
  };
  addU('inlet.p', 'inletPressure');
  addU('inlet.T', 'inletTemperature');
  addU('outlet.p', 'outletPressure');
  addU('outlet.T', 'outletTemperature');

  let massFlow = v('massFlow');
  let volumeFlow: number | undefined;
  if (massFlow !== undefined) addU('massFlow', 'massFlow');
  else {
    const q = v('volumeFlow');
    const qt = tag('volumeFlow');
    if (q !== undefined && qt !== undefined) {
      if (qt.normalVolume !== undefined) {
        const molarMass: unknown = (machine.fluid as unknown as Readonly<Record<string, unknown>>).molarMass;
        if (typeof molarMass !== 'number')
          throw new JobsError(
            'JOBS_BAD_CONFIG',
            `machine ${machine.row.slug}: a normal volume flow needs a gas with a molar mass`,
            {
              machine: machine.row.slug,
              unit: qt.unit,
            },
          );
        massFlow = normalVolumeFlowToMassFlow(q, molarMass, qt.normalVolume);
        addU('massFlow', 'volumeFlow', massFlow / q);
      } else {
        volumeFlow = q;
        addU('volumeFlow', 'volumeFlow');
      }
    }
  }
  const shaftPower = v('shaftPower');
  const electricalPower = shaftPower === undefined ? v('electricalPower') : undefined;
  if (shaftPower !== undefined) addU('shaftPower', 'shaftPower');
  if (electricalPower !== undefined) addU('electricalPower', 'electricalPower');
  const driverEfficiency =
    electricalPower !== undefined ? (machine.row.driverEfficiency ?? undefined) : undefined;

  const input: MachineInput = {
    kind,
    fluid: machine.fluid,
    inlet: { p: pIn, T: tIn },
    outlet: { p: pOut, T: tOut },
    massFlow,
    volumeFlow,
    shaftPower,
    electricalPower: driverEfficiency !== undefined ? electricalPower : undefined,
    driverEfficiency,
  };
  try {
    const { result: r, uncertainty: u } = evaluateMachineWithUncertainty(input, unc as MachineUncertainties);
    for (const f of r.flags) flags.push(INSTRUMENT_FAULT_FLAGS.has(f) ? `${FAULT_PREFIX}${f}` : f);
    const power = r.power;
    const op =
      machine.operatingPoint === 'pressureRatio'
        ? pOut / pIn
        : machine.operatingPoint === 'load'
          ? (r.shaftPowerUsed ?? power)
          : r.massFlow;
    return {
      row: {
        ...base,
        hIn: r.inlet.h,
        sIn: r.inlet.s,
        hOut: r.outlet.h,
        sOut: r.outlet.s,
        tOut: r.outlet.T,
        tOutS: r.outletIsentropic.T,
        hOutS: r.outletIsentropic.h,
        massFlow: fin(r.massFlow),
        efficiency: fin(r.isentropicEfficiency),
        uEfficiency: fin(u.isentropicEfficiency),
        polytropicEfficiency: fin(r.polytropicEfficiency),
        uPolytropicEfficiency: fin(u.polytropicEfficiency),
        specificWork: fin(r.specificWork),
        uSpecificWork: fin(u.specificWork),
        power: fin(power),
        uPower: fin(u.power),
        entropyGeneration: fin(r.entropyGeneration),
        uEntropyGeneration: fin(u.entropyGeneration),
        operatingPoint: fin(op),
      },
      flags,
      // A machine at rest or without head has no meaningful efficiency (not an instrument fault).
      modelValid:
        r.valid &&
        r.isentropicEfficiency !== undefined &&
        !r.flags.some((f) => f === 'no-flow' || f === 'low-head' || f === 'no-work'),
      secondLaw: r.flags.includes('second-law-violation'),
      impossible:
        r.flags.includes('efficiency-above-one') || r.flags.includes('outlet-colder-than-isentropic'),
    };
  } catch (error) {
    if (!(error instanceof ThermoError)) throw error;
    // Readings outside a property model's range: the point has no figures, and says why.
    flags.push(`model-error:${error.code}`);
    return { row: base, flags, modelValid: false, secondLaw: false, impossible: false };
  }
}
