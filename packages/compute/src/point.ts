/**
 * One grid point through the machine model (pipeline.ts): its result row with the figures, their
 * GUM uncertainties (the full per-point propagation, or the segment's linearisation), and the
 * notes and fault flags the model gives.
 */
import {
  evaluateMachine,
  evaluateMachineWithUncertainty,
  INSTRUMENT_FAULT_FLAGS,
  type MachineResult,
  type MachineUncertainties,
  ThermoError,
} from '@isentrope/thermo';
import { type Chunk, ST_MISSING, ST_REVERSED, ST_STOPPED } from './chunk.js';
import { FAULT_PREFIX } from './findings.js';
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
  machineInput,
  N_INPUTS,
  N_OUTPUTS,
  OUT_ETA,
  OUT_ETA_FAN,
  OUT_ETA_HYDRAULIC,
  OUT_ETA_POLY,
  OUT_POWER,
  OUT_SGEN,
  OUT_WORK,
  outputsOf,
  reflag,
} from './linearise.js';
import type { ResolvedComputeOptions, ResultRow } from './options.js';

/** A linearisation point, its sensitivities computed on first use. */
export interface LinPoint {
  readonly x0: Float64Array;
  readonly u0: Float64Array;
  lin: Linearisation | undefined;
}

function fin(v: number | undefined): number | null {
  return v !== undefined && Number.isFinite(v) ? v : null;
}

/** A result row while it is being filled (steady, flags and valid are set last). */
export type PointRow = { -readonly [K in keyof ResultRow]: ResultRow[K] };

export interface PointEval {
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
  outputsOf(u, uOut);
  return result;
}

const uScratch = new Float64Array(N_OUTPUTS);

function noModel(row: PointRow, flags: readonly string[], impossible: boolean): PointEval {
  return { row, flags, modelValid: false, secondLaw: false, impossible };
}

/** A point missing a pressure or temperature: the readings it has, no figures. */
function missingPoint(ch: Chunk, j: number): PointEval {
  const col = (role: string): number => ch.si.get(role)?.[j] ?? Number.NaN;
  const row = baseRow(
    ch.machine.row.id,
    ch.aligned.t[j] as number,
    col('inletPressure'),
    col('inletTemperature'),
    col('outletPressure'),
    col('outletTemperature'),
  );
  return noModel(row, NO_FLAGS, false);
}

/** The machine model at point j with the uncertainty in u (per OUT_* slot). */
function runModel(
  ch: Chunk,
  j: number,
  lp: LinPoint | undefined,
  o: ResolvedComputeOptions,
  u: Float64Array,
): MachineResult {
  if (o.gum === 'point' || lp === undefined) return pointGum(ch, j, u);
  lp.lin ??= linearise(ch.template, lp.x0, lp.u0);
  if (lp.lin.c === undefined) return pointGum(ch, j, u);
  const r = evaluateMachine(machineInput(ch.template, ch.x, j * N_INPUTS));
  combine(lp.lin, ch.u, j * N_INPUTS, u);
  return reflag(r, u);
}

/**
 * The figure trended as "efficiency". Pumps and fans with a measured power: the power-based
 * efficiency (hydraulic power / shaft power; fan air power with ISO 5801 k_p / shaft power).
 * Their temperature rise is about 1 K, which plant thermometers cannot resolve well enough for
 * the thermodynamic method (ISO 5198 asks for far finer thermometry), so its uncertainty would
 * hide any real loss. Turbines and compressors, or no power tag: the isentropic efficiency.
 */
function primaryEfficiency(kind: string, r: MachineResult): { value: number | undefined; slot: number } {
  if (kind === 'pump' && r.hydraulicEfficiency !== undefined)
    return { value: r.hydraulicEfficiency, slot: OUT_ETA_HYDRAULIC };
  if (kind === 'fan' && r.fanEfficiency !== undefined) return { value: r.fanEfficiency, slot: OUT_ETA_FAN };
  return { value: r.isentropicEfficiency, slot: OUT_ETA };
}

/** Fills the model's figures into the point's row object (one object per point, no copy). */
function fillFigures(
  row: PointRow,
  ch: Chunk,
  r: MachineResult,
  u: Float64Array,
  primary: { value: number | undefined; slot: number },
  ratio: number,
): void {
  const op = ch.machine.operatingPoint;
  row.hIn = r.inlet.h;
  row.sIn = r.inlet.s;
  row.tOut = r.outlet.T;
  row.hOut = r.outlet.h;
  row.sOut = r.outlet.s;
  row.tOutS = r.outletIsentropic.T;
  row.hOutS = r.outletIsentropic.h;
  row.massFlow = fin(r.massFlow);
  row.efficiency = fin(primary.value);
  row.uEfficiency = uOrNull(u, primary.value, primary.slot);
  row.polytropicEfficiency = fin(r.polytropicEfficiency);
  row.uPolytropicEfficiency = uOrNull(u, r.polytropicEfficiency, OUT_ETA_POLY);
  row.specificWork = fin(r.specificWork);
  row.uSpecificWork = uOrNull(u, r.specificWork, OUT_WORK);
  row.power = fin(r.power);
  row.uPower = uOrNull(u, r.power, OUT_POWER);
  row.entropyGeneration = fin(r.entropyGeneration);
  row.uEntropyGeneration = uOrNull(u, r.entropyGeneration, OUT_SGEN);
  row.operatingPoint = fin(
    op === 'pressureRatio' ? ratio : op === 'load' ? (r.shaftPowerUsed ?? r.power) : r.massFlow,
  );
}

export function evaluatePoint(
  ch: Chunk,
  j: number,
  status: number,
  lp: LinPoint | undefined,
  o: ResolvedComputeOptions,
): PointEval {
  if (status === ST_MISSING) return missingPoint(ch, j);
  const machine = ch.machine;
  const o8 = j * N_INPUTS;
  const pIn = ch.x[o8 + IN_P_IN] as number;
  const pOut = ch.x[o8 + IN_P_OUT] as number;
  const base = baseRow(
    machine.row.id,
    ch.aligned.t[j] as number,
    pIn,
    ch.x[o8 + IN_T_IN] as number,
    pOut,
    ch.x[o8 + IN_T_OUT] as number,
  );
  // Gauge/absolute mix-ups are found over time by the instrument step (instrument.ts) and come
  // back as stored findings (findings.ts), not per point here: one point cannot tell them apart.
  if (status === ST_STOPPED) return noModel(base, ['not-running'], false);
  if (status === ST_REVERSED) {
    const fault = machine.row.kind === 'turbine' ? 'outlet-above-inlet' : 'outlet-below-inlet';
    return noModel(base, [`${FAULT_PREFIX}${fault}`], true);
  }
  const u = uScratch;
  let r: MachineResult;
  try {
    r = runModel(ch, j, lp, o, u);
  } catch (error) {
    if (!(error instanceof ThermoError)) throw error;
    // Readings outside a property model's range: the point has no figures, and says why.
    return noModel(base, [`model-error:${error.code}`], false);
  }
  const flags: string[] = [];
  for (const f of r.flags) flags.push(INSTRUMENT_FAULT_FLAGS.has(f) ? `${FAULT_PREFIX}${f}` : f);
  const primary = primaryEfficiency(machine.row.kind, r);
  fillFigures(base, ch, r, u, primary, pOut / pIn);
  let noEfficiency = false;
  let secondLaw = false;
  let impossible = false;
  for (const f of r.flags) {
    if (f === 'no-flow' || f === 'low-head' || f === 'no-work') noEfficiency = true;
    else if (f === 'second-law-violation') secondLaw = true;
    else if (f === 'efficiency-above-one' || f === 'outlet-colder-than-isentropic') impossible = true;
  }
  return {
    row: base,
    flags,
    // A machine at rest or without head has no meaningful efficiency (not an instrument fault).
    modelValid: r.valid && primary.value !== undefined && !noEfficiency,
    secondLaw,
    impossible,
  };
}

const NO_FLAGS: readonly string[] = [];

/** A figure's standard uncertainty from slot k of u, or null when the figure itself is absent. */
function uOrNull(u: Float64Array, v: number | undefined, k: number): number | null {
  return v === undefined || !Number.isFinite(v) ? null : fin(u[k]);
}
