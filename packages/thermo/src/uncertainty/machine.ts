import { BadInputError } from '../errors.js';
import type { Fluid, FluidState } from '../fluid.js';
import { DEFAULT_ENTROPY_TOLERANCE } from '../machines/common.js';
import { evaluateMachine } from '../machines/index.js';
import {
  INSTRUMENT_FAULT_FLAGS,
  type MachineFlag,
  type MachineInput,
  type MachineResult,
} from '../machines/types.js';
import { propagateGum } from './gum.js';
import { type MonteCarloOptions, type MonteCarloSummary, propagateMonteCarlo } from './monte-carlo.js';

/** A standard uncertainty as instruments state it. */
export type UncertaintySpec =
  /** Absolute, in the SI unit of the quantity ([Pa], [K], [kg/s], [W], ...; a fraction for driverEfficiency). */
  | { readonly kind: 'absolute'; readonly value: number }
  /** Percent of the reading (for temperatures: of the reading in K). */
  | { readonly kind: 'reading'; readonly percent: number }
  /** Percent of the instrument span (span in the SI unit of the quantity). */
  | { readonly kind: 'span'; readonly percent: number; readonly span: number };

export const UNCERTAIN_INPUTS = [
  'inlet.p',
  'inlet.T',
  'outlet.p',
  'outlet.T',
  'massFlow',
  'volumeFlow',
  'shaftPower',
  'electricalPower',
  'driverEfficiency',
] as const;
export type UncertainInput = (typeof UNCERTAIN_INPUTS)[number];
export type MachineUncertainties = Partial<Record<UncertainInput, UncertaintySpec>>;

export const UNCERTAIN_OUTPUTS = [
  'isentropicEfficiency',
  'specificWork',
  'isentropicSpecificWork',
  'power',
  'entropyGeneration',
  'polytropicEfficiency',
  'polytropicHead',
  'head',
  'hydraulicPower',
  'hydraulicEfficiency',
  'thermodynamicEfficiency',
  'airPower',
  'fanEfficiency',
  'massFlow',
] as const;
export type UncertainOutput = (typeof UNCERTAIN_OUTPUTS)[number];
/** Standard uncertainty of each output, in the output's SI unit (fractions for efficiencies). */
export type MachineOutputUncertainty = Partial<Record<UncertainOutput, number>>;

/** Coverage factor used to call a second-law violation real: k = 2, about 95 % (GUM 6.2, 6.3). */
export const COVERAGE_FACTOR = 2;

/** Standard uncertainty [SI unit of the quantity] of a reading from its specification. */
export function standardUncertainty(spec: UncertaintySpec, reading: number): number {
  switch (spec.kind) {
    case 'absolute':
      return spec.value;
    case 'reading':
      return (Math.abs(reading) * spec.percent) / 100;
    case 'span':
      return (spec.span * spec.percent) / 100;
  }
}

function readInput(input: MachineInput, key: UncertainInput): number | undefined {
  switch (key) {
    case 'inlet.p':
      return input.inlet.p;
    case 'inlet.T':
      return input.inlet.T;
    case 'outlet.p':
      return input.outlet.p;
    case 'outlet.T':
      return input.outlet.T;
    default:
      return input[key];
  }
}

/**
 * A fluid that remembers its last few answers: the GUM differences change one input at a time,
 * so most state points repeat (perturbing the mass flow recomputes no state at all).
 */
function memoFluid(fluid: Fluid): Fluid {
  const size = 16;
  const keyA = new Float64Array(size * 3);
  const vals: (FluidState | undefined)[] = new Array(size);
  let next = 0;
  const lookup = (method: number, a: number, b: number, compute: () => FluidState): FluidState => {
    for (let i = 0; i < size; i++) {
      const j = i * 3;
      if (keyA[j] === method && keyA[j + 1] === a && keyA[j + 2] === b) {
        const hit = vals[i];
        if (hit !== undefined) return hit;
      }
    }
    const value = compute();
    const j = next * 3;
    keyA[j] = method;
    keyA[j + 1] = a;
    keyA[j + 2] = b;
    vals[next] = value;
    next = (next + 1) % size;
    return value;
  };
  const memo: Fluid = {
    name: fluid.name,
    kind: fluid.kind,
    statePT: (p, T) => lookup(1, p, T, () => fluid.statePT(p, T)),
    statePH: (p, h) => lookup(2, p, h, () => fluid.statePH(p, h)),
    statePS: (p, s) => lookup(3, p, s, () => fluid.statePS(p, s)),
  };
  const tsat = fluid.saturationTemperature?.bind(fluid);
  if (tsat !== undefined) {
    let lastP = Number.NaN;
    let lastT = Number.NaN;
    return {
      ...memo,
      saturationTemperature: (p) => {
        if (p !== lastP) {
          lastT = tsat(p);
          lastP = p;
        }
        return lastT;
      },
    };
  }
  return memo;
}

interface Prepared {
  readonly keys: UncertainInput[];
  readonly x: Float64Array;
  readonly u: Float64Array;
  readonly model: (x: Float64Array) => Record<string, number | undefined>;
  readonly fluid: Fluid;
}

function prepare(input: MachineInput, uncertainties: MachineUncertainties): Prepared {
  const keys: UncertainInput[] = [];
  const xs: number[] = [];
  const us: number[] = [];
  for (const key of UNCERTAIN_INPUTS) {
    const spec = uncertainties[key];
    if (spec === undefined) continue;
    const reading = readInput(input, key);
    if (reading === undefined) {
      throw new BadInputError(`uncertainty.${key}`, `is given but ${key} itself is not`);
    }
    const ui = standardUncertainty(spec, reading);
    if (!(ui >= 0) || !Number.isFinite(ui)) {
      throw new BadInputError(
        `uncertainty.${key}`,
        `must give a finite standard uncertainty >= 0, got ${ui}`,
      );
    }
    if (ui === 0) continue;
    keys.push(key);
    xs.push(reading);
    us.push(ui);
  }
  const fluid = memoFluid(input.fluid);
  const base: MachineInput = { ...input, fluid };
  const model = (x: Float64Array): Record<string, number | undefined> => {
    let inlet = base.inlet;
    let outlet = base.outlet;
    const changed: Record<string, number> = {};
    for (let i = 0; i < keys.length; i++) {
      const key = keys[i]!;
      const value = x[i]!;
      if (key === 'inlet.p') inlet = { p: value, T: inlet.T };
      else if (key === 'inlet.T') inlet = { p: inlet.p, T: value };
      else if (key === 'outlet.p') outlet = { p: value, T: outlet.T };
      else if (key === 'outlet.T') outlet = { p: outlet.p, T: value };
      else changed[key] = value;
    }
    const r = evaluateMachine({ ...base, ...changed, inlet, outlet });
    return pickOutputs(r);
  };
  return { keys, x: Float64Array.from(xs), u: Float64Array.from(us), model, fluid };
}

function pickOutputs(r: MachineResult): Record<string, number | undefined> {
  const out: Record<string, number | undefined> = {};
  for (const key of UNCERTAIN_OUTPUTS) out[key] = r[key];
  return out;
}

export interface MachineWithUncertainty {
  /** The result, with its instrument-fault flags decided against the uncertainty. */
  readonly result: MachineResult;
  readonly uncertainty: MachineOutputUncertainty;
}

/**
 * The machine result with the standard uncertainty of each output (GUM first order, uncorrelated
 * inputs). A second-law violation is kept only when s_out - s_in < -k u (k = 2) and the
 * tolerance; an efficiency above one only when eta - 1 > k u(eta): otherwise it lies inside the
 * instruments' own uncertainty.
 */
export function evaluateMachineWithUncertainty(
  input: MachineInput,
  uncertainties: MachineUncertainties,
): MachineWithUncertainty {
  const prepared = prepare(input, uncertainties);
  // Through the memoised fluid, so the GUM base point below costs no new state.
  const result = evaluateMachine({ ...input, fluid: prepared.fluid });
  if (prepared.keys.length === 0) return { result, uncertainty: {} };
  const gum = propagateGum(prepared.model, prepared.x, prepared.u);
  const uncertainty = gum.uncertainty as MachineOutputUncertainty;
  return { result: reflag(input, result, uncertainty), uncertainty };
}

function reflag(input: MachineInput, result: MachineResult, u: MachineOutputUncertainty): MachineResult {
  const tolerance = input.entropyTolerance ?? DEFAULT_ENTROPY_TOLERANCE;
  const flags: MachineFlag[] = result.flags.filter(
    (f) =>
      f !== 'second-law-violation' && f !== 'efficiency-above-one' && f !== 'outlet-colder-than-isentropic',
  );
  const sgen = result.entropyGeneration;
  const violation =
    sgen !== undefined && sgen < -Math.max(tolerance, COVERAGE_FACTOR * (u.entropyGeneration ?? 0));
  if (violation) {
    flags.push('second-law-violation');
    if (result.flags.includes('outlet-colder-than-isentropic')) flags.push('outlet-colder-than-isentropic');
  }
  const above = (['isentropicEfficiency', 'hydraulicEfficiency', 'fanEfficiency'] as const).some((k) => {
    const eta = result[k];
    return eta !== undefined && eta - 1 > Math.max(1e-9, COVERAGE_FACTOR * (u[k] ?? 0));
  });
  if (above) flags.push('efficiency-above-one');
  const valid = !flags.some(
    (f) => INSTRUMENT_FAULT_FLAGS.has(f) || f === 'outlet-undetermined' || f === 'inlet-undetermined',
  );
  return { ...result, flags, valid };
}

/**
 * Monte Carlo check of evaluateMachineWithUncertainty (JCGM 101:2008, Gaussian inputs, seeded).
 * Slow: for tests and investigations, not for every sample.
 */
export function machineMonteCarlo(
  input: MachineInput,
  uncertainties: MachineUncertainties,
  options: MonteCarloOptions = {},
): Partial<Record<UncertainOutput, MonteCarloSummary>> {
  const prepared = prepare(input, { ...uncertainties });
  // No memo needed here, but it does no harm: every trial misses.
  return propagateMonteCarlo(prepared.model, prepared.x, prepared.u, options) as Partial<
    Record<UncertainOutput, MonteCarloSummary>
  >;
}
