/**
 * A whole range of one machine aligned once (pipeline.ts): raw samples (tag units) -> SI on the
 * grid (gauge pressures plus the ambient) -> the model inputs, their standard uncertainties and a
 * status per grid point (missing, stopped, reversed, model).
 */
import { type AlignedTag, alignTags, type TagColumns } from '@isentrope/monitor';
import { normalVolumeFlowToMassFlow } from '@isentrope/thermo';
import { ComputeError } from './errors.js';
import {
  IN_ELECTRICAL_POWER,
  IN_MASS_FLOW,
  IN_P_IN,
  IN_P_OUT,
  IN_SHAFT_POWER,
  IN_T_IN,
  IN_T_OUT,
  IN_VOLUME_FLOW,
  type ModelTemplate,
  N_INPUTS,
} from './linearise.js';
import type { PreparedMachine, PreparedTag } from './machine.js';
import type { RawSeries, ResolvedComputeOptions } from './options.js';

/**
 * |p_out/p_in - 1| below which the machine counts as stopped (common practice, no source): 2 %
 * for turbines, compressors and pumps; fans run on a pressure rise of a few kPa (a ratio of
 * 1.01 to 1.05), so for them 0.2 % (about 2 mbar at atmospheric pressure).
 */
const MIN_RUNNING_RATIO = 0.02;
const MIN_RUNNING_RATIO_FAN = 0.002;
/** Mass flow below this fraction of the rated flow: stopped (common practice, no source). */
const MIN_RUNNING_FLOW = 0.05;

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
export const ST_MISSING = 0; // a pressure or temperature is missing: no model
export const ST_STOPPED = 1; // not running: no model
export const ST_REVERSED = 2; // pressure change against the machine kind: an instrument fault, no model
export const ST_MODEL = 3; // the machine model runs

/** A whole range aligned once: SI inputs, their uncertainties and a status per grid point. */
export interface Chunk {
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

/** Aligns every tag of the machine (and the site's barometer) on the grid and takes gauge pressures to absolute. */
function alignChunk(
  machine: PreparedMachine,
  samples: ReadonlyMap<number, RawSeries>,
  startMs: number,
  endMs: number,
  o: ResolvedComputeOptions,
): { aligned: ReturnType<typeof alignTags>; si: Map<string, Float64Array> } {
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
  return { aligned, si };
}

/** The gas molar mass [kg/mol] when a normal volume flow stands in for the mass flow. */
function molarMassFor(machine: PreparedMachine, hasMassFlow: boolean): number | undefined {
  const qTag = machine.tags.get('volumeFlow');
  if (hasMassFlow || qTag?.normalVolume === undefined) return undefined;
  const mm: unknown = (machine.fluid as unknown as Readonly<Record<string, unknown>>).molarMass;
  if (typeof mm !== 'number')
    throw new ComputeError(
      'COMPUTE_BAD_CONFIG',
      `machine ${machine.row.slug}: a normal volume flow needs a gas with a molar mass`,
      { machine: machine.row.slug, unit: qTag.unit },
    );
  return mm;
}

/** Everything the per-point input loop reads, looked up once per chunk rather than per point. */
interface InputColumns {
  readonly machine: PreparedMachine;
  readonly aligned: ReturnType<typeof alignTags>;
  readonly pIn: Float64Array;
  readonly tIn: Float64Array;
  readonly pOut: Float64Array;
  readonly tOut: Float64Array;
  readonly mCol: Float64Array | undefined;
  readonly qCol: Float64Array | undefined;
  readonly wCol: Float64Array | undefined;
  readonly eCol: Float64Array | undefined;
  readonly qTag: PreparedTag | undefined;
  readonly molarMass: number | undefined;
  readonly minRatio: number;
  readonly slotTags: readonly (readonly [PreparedTag, number])[];
  /** The aligned (tag-unit-scaled) column of each role. */
  readonly alignedOf: ReadonlyMap<string, Float64Array>;
}

function inputColumns(
  machine: PreparedMachine,
  aligned: ReturnType<typeof alignTags>,
  si: ReadonlyMap<string, Float64Array>,
): InputColumns {
  const tagOf = (role: string): PreparedTag => machine.tags.get(role) as PreparedTag;
  const alignedOf = new Map<string, Float64Array>();
  for (const tag of machine.tags.values())
    alignedOf.set(tag.role, (aligned.tags.get(tag.role) as AlignedTag).value);
  const mCol = si.get('massFlow');
  return {
    machine,
    aligned,
    pIn: si.get('inletPressure') as Float64Array,
    tIn: si.get('inletTemperature') as Float64Array,
    pOut: si.get('outletPressure') as Float64Array,
    tOut: si.get('outletTemperature') as Float64Array,
    mCol,
    qCol: si.get('volumeFlow'),
    wCol: si.get('shaftPower'),
    eCol: si.get('electricalPower'),
    qTag: machine.tags.get('volumeFlow'),
    molarMass: molarMassFor(machine, mCol !== undefined),
    minRatio: machine.row.kind === 'fan' ? MIN_RUNNING_RATIO_FAN : MIN_RUNNING_RATIO,
    slotTags: ROLE_SLOTS.map(([role, slot]) => [tagOf(role), slot] as const),
    alignedOf,
  };
}

/** Standard uncertainty [SI] of a tag at point i, from the reading in the tag unit (a percent of reading follows it; gauge stays gauge). */
function uOf(c: InputColumns, tag: PreparedTag, i: number): number {
  const raw = (((c.alignedOf.get(tag.role) as Float64Array)[i] as number) - tag.intercept) / tag.slope;
  const ui = tag.uncertaintySI(raw);
  return ui > 0 && Number.isFinite(ui) ? ui : 0;
}

/** Status of point i from its four pressures and temperatures (already in x) and the flow. */
function pointStatus(c: InputColumns, i: number, a: number, b: number): number {
  // At rest (no pressure change worth the name) there is no efficiency to judge.
  if (Math.abs(b / a - 1) < c.minRatio) return ST_STOPPED;
  const m = c.mCol?.[i];
  const mRated = c.machine.ratedMassFlow;
  if (mRated !== undefined && m !== undefined && Number.isFinite(m) && m < MIN_RUNNING_FLOW * mRated)
    return ST_STOPPED;
  // A driven machine cannot lower the pressure (nor a turbine raise it): a transmitter is wrong,
  // most often a gauge reading taken as absolute or the other way round.
  if (c.machine.row.kind === 'turbine' ? b > a : b < a) return ST_REVERSED;
  return ST_MODEL;
}

/** The flow and power inputs of a model point, with their uncertainties. */
function fillFlowAndPower(c: InputColumns, i: number, x: Float64Array, u: Float64Array, o8: number): void {
  const m = c.mCol?.[i];
  if (m !== undefined && Number.isFinite(m)) {
    x[o8 + IN_MASS_FLOW] = m;
    u[o8 + IN_MASS_FLOW] = uOf(c, c.machine.tags.get('massFlow') as PreparedTag, i);
  } else if (c.mCol === undefined && c.qCol !== undefined && c.qTag !== undefined) {
    const q = c.qCol[i] as number;
    if (Number.isFinite(q)) {
      if (c.molarMass !== undefined && c.qTag.normalVolume !== undefined) {
        const mq = normalVolumeFlowToMassFlow(q, c.molarMass, c.qTag.normalVolume);
        x[o8 + IN_MASS_FLOW] = mq;
        // Linear in q: u(m) = u(q) m / q.
        u[o8 + IN_MASS_FLOW] = (uOf(c, c.qTag, i) * mq) / q;
      } else {
        x[o8 + IN_VOLUME_FLOW] = q;
        u[o8 + IN_VOLUME_FLOW] = uOf(c, c.qTag, i);
      }
    }
  }
  const w = c.wCol?.[i];
  if (w !== undefined && Number.isFinite(w)) {
    x[o8 + IN_SHAFT_POWER] = w;
    u[o8 + IN_SHAFT_POWER] = uOf(c, c.machine.tags.get('shaftPower') as PreparedTag, i);
  } else if (c.machine.row.driverEfficiency !== null) {
    const e = c.eCol?.[i];
    if (e !== undefined && Number.isFinite(e)) {
      x[o8 + IN_ELECTRICAL_POWER] = e;
      u[o8 + IN_ELECTRICAL_POWER] = uOf(c, c.machine.tags.get('electricalPower') as PreparedTag, i);
    }
  }
}

export function prepareChunk(
  machine: PreparedMachine,
  samples: ReadonlyMap<number, RawSeries>,
  startMs: number,
  endMs: number,
  o: ResolvedComputeOptions,
): Chunk {
  const { aligned, si } = alignChunk(machine, samples, startMs, endMs, o);
  const c = inputColumns(machine, aligned, si);
  const n = aligned.t.length;
  const x = new Float64Array(n * N_INPUTS).fill(Number.NaN);
  const u = new Float64Array(n * N_INPUTS);
  const status = new Uint8Array(n);
  for (let i = 0; i < n; i++) {
    const a = c.pIn[i] as number;
    const b = c.tIn[i] as number;
    const p2 = c.pOut[i] as number;
    const d = c.tOut[i] as number;
    if (!Number.isFinite(a) || !Number.isFinite(b) || !Number.isFinite(p2) || !Number.isFinite(d)) continue;
    const o8 = i * N_INPUTS;
    x[o8 + IN_P_IN] = a;
    x[o8 + IN_T_IN] = b;
    x[o8 + IN_P_OUT] = p2;
    x[o8 + IN_T_OUT] = d;
    const st = pointStatus(c, i, a, p2);
    status[i] = st;
    if (st !== ST_MODEL) continue;
    for (let k = 0; k < c.slotTags.length; k++) {
      const [tag, slot] = c.slotTags[k] as readonly [PreparedTag, number];
      u[o8 + slot] = uOf(c, tag, i);
    }
    fillFlowAndPower(c, i, x, u, o8);
    // Any uncertainty that came out non-finite is left out, as the per-point GUM leaves it out.
    for (let k = 0; k < N_INPUTS; k++) if (!Number.isFinite(u[o8 + k] as number)) u[o8 + k] = 0;
  }
  const driverEfficiency = machine.row.driverEfficiency ?? undefined;
  return {
    machine,
    template: { kind: machine.row.kind, fluid: machine.fluid, driverEfficiency },
    startMs,
    aligned,
    si,
    x,
    u,
    status,
  };
}
