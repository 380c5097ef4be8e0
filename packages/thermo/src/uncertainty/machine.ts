import { BadInputError } from '../errors.js';
import type { Fluid, FluidState } from '../fluid.js';
import { checkInput, DEFAULT_ENTROPY_TOLERANCE } from '../machines/common.js';
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

/** Enough for the base point and both sides of all nine inputs (3 + 9 x 2 x 2 state points). */
const MEMO_SIZE = 40;

/**
 * A fluid that remembers the state points of one uncertainty evaluation: the GUM differences
 * change one input at a time, so most state points repeat (perturbing the mass flow recomputes
 * no state at all). Searched oldest first, because the base point's states are hit most.
 */
class MemoFluid implements Fluid {
  readonly name: string;
  readonly kind: Fluid['kind'];
  readonly saturationTemperature?: ((p: number) => number) | undefined;
  private readonly keys: number[] = [];
  private readonly values: FluidState[] = [];
  private readonly satP: number[] = [];
  private readonly satT: number[] = [];

  constructor(private readonly inner: Fluid) {
    this.name = inner.name;
    this.kind = inner.kind;
    const tsat = inner.saturationTemperature;
    if (tsat !== undefined) {
      // Two pressures (inlet and outlet) repeat through every perturbation: remember a few.
      this.saturationTemperature = (p: number): number => {
        const i = this.satP.indexOf(p);
        if (i >= 0) return this.satT[i]!;
        const T = tsat.call(inner, p);
        if (this.satP.length < MEMO_SIZE) {
          this.satP.push(p);
          this.satT.push(T);
        }
        return T;
      };
    }
  }

  private find(method: number, a: number, b: number): FluidState | undefined {
    const k = this.keys;
    const n = this.values.length;
    for (let i = 0, j = 0; i < n; i++, j += 3) {
      if (k[j + 2] === b && k[j + 1] === a && k[j] === method) return this.values[i];
    }
    return undefined;
  }

  private store(method: number, a: number, b: number, value: FluidState): FluidState {
    const i = this.values.length;
    if (i === MEMO_SIZE) return value; // full: compute without remembering
    this.keys.push(method, a, b);
    this.values.push(value);
    return value;
  }

  statePT(p: number, T: number): FluidState {
    return this.find(1, p, T) ?? this.store(1, p, T, this.inner.statePT(p, T));
  }

  statePH(p: number, h: number): FluidState {
    return this.find(2, p, h) ?? this.store(2, p, h, this.inner.statePH(p, h));
  }

  statePS(p: number, s: number): FluidState {
    return this.find(3, p, s) ?? this.store(3, p, s, this.inner.statePS(p, s));
  }
}

type Mutable<T> = { -readonly [K in keyof T]: T[K] };

interface Prepared {
  readonly keys: UncertainInput[];
  readonly x: Float64Array;
  readonly u: Float64Array;
  /** The machine as a vector function of the uncertain inputs; outputs in UNCERTAIN_OUTPUTS order, NaN when absent. */
  readonly model: (x: Float64Array) => Float64Array;
  readonly fluid: Fluid;
  /** The result at the input estimates (the model's first evaluation, or a new one). */
  readonly baseResult: () => MachineResult;
}

function prepare(given: MachineInput, uncertainties: MachineUncertainties): Prepared {
  // Checked once, and copied to the one fixed shape the machine functions expect (see checkInput).
  const input = checkInput(given);
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
  const fluid = new MemoFluid(input.fluid);
  // One mutable input, rewritten per evaluation: the machine functions only read it.
  const inlet = { p: input.inlet.p, T: input.inlet.T };
  const outlet = { p: input.outlet.p, T: input.outlet.T };
  // Every field spelled out, in one order, from the start: a spread copy, or a field added later,
  // gives objects of varying shape and slowed every machine call about 2.5-fold (measured).
  const work: Mutable<MachineInput> = {
    kind: input.kind,
    fluid,
    inlet,
    outlet,
    massFlow: input.massFlow,
    volumeFlow: input.volumeFlow,
    shaftPower: input.shaftPower,
    electricalPower: input.electricalPower,
    driverEfficiency: input.driverEfficiency,
    wetMargin: input.wetMargin,
    entropyTolerance: input.entropyTolerance,
    outletFrom: input.outletFrom,
  };
  const out = new Float64Array(UNCERTAIN_OUTPUTS.length);
  let first: MachineResult | undefined;
  const model = (x: Float64Array): Float64Array => {
    for (let i = 0; i < keys.length; i++) {
      const value = x[i]!;
      switch (keys[i]!) {
        case 'inlet.p':
          inlet.p = value;
          break;
        case 'inlet.T':
          inlet.T = value;
          break;
        case 'outlet.p':
          outlet.p = value;
          break;
        case 'outlet.T':
          outlet.T = value;
          break;
        case 'massFlow':
          work.massFlow = value;
          break;
        case 'volumeFlow':
          work.volumeFlow = value;
          break;
        case 'shaftPower':
          work.shaftPower = value;
          break;
        case 'electricalPower':
          work.electricalPower = value;
          break;
        case 'driverEfficiency':
          work.driverEfficiency = value;
          break;
      }
    }
    const r = evaluateMachine(work);
    // The first call is at the input estimates: keep its full result.
    if (first === undefined) {
      first = r;
      if (r.kind === 'turbine') {
        // Keep every perturbed point on the base point's outlet method (see MachineInput.outletFrom).
        work.outletFrom = r.flags.includes('wet-outlet-energy-balance') ? 'energy-balance' : 'temperature';
      }
    }
    // Spelled out, in UNCERTAIN_OUTPUTS order: named loads are much faster than keyed ones here.
    out[0] = r.isentropicEfficiency ?? Number.NaN;
    out[1] = r.specificWork ?? Number.NaN;
    out[2] = r.isentropicSpecificWork;
    out[3] = r.power ?? Number.NaN;
    out[4] = r.entropyGeneration ?? Number.NaN;
    out[5] = r.polytropicEfficiency ?? Number.NaN;
    out[6] = r.polytropicHead ?? Number.NaN;
    out[7] = r.head ?? Number.NaN;
    out[8] = r.hydraulicPower ?? Number.NaN;
    out[9] = r.hydraulicEfficiency ?? Number.NaN;
    out[10] = r.thermodynamicEfficiency ?? Number.NaN;
    out[11] = r.airPower ?? Number.NaN;
    out[12] = r.fanEfficiency ?? Number.NaN;
    out[13] = r.massFlow ?? Number.NaN;
    return out;
  };
  return {
    keys,
    x: Float64Array.from(xs),
    u: Float64Array.from(us),
    model,
    fluid,
    baseResult: () => first ?? evaluateMachine(work),
  };
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
  if (prepared.keys.length === 0) return { result: prepared.baseResult(), uncertainty: {} };
  const gum = propagateGum(prepared.model, prepared.x, prepared.u);
  // propagateGum evaluates the input estimates first, before any perturbed point.
  const result = prepared.baseResult();
  const uncertainty: MachineOutputUncertainty = {};
  for (let j = 0; j < UNCERTAIN_OUTPUTS.length; j++) {
    const uj = gum.uncertainty[j]!;
    if (Number.isFinite(uj)) uncertainty[UNCERTAIN_OUTPUTS[j]!] = uj;
  }
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
  const prepared = prepare(input, uncertainties);
  const named = (x: Float64Array): Record<string, number> => {
    const y = prepared.model(x);
    const out: Record<string, number> = {};
    for (let j = 0; j < UNCERTAIN_OUTPUTS.length; j++) out[UNCERTAIN_OUTPUTS[j]!] = y[j]!;
    return out;
  };
  return propagateMonteCarlo(named, prepared.x, prepared.u, options) as Partial<
    Record<UncertainOutput, MonteCarloSummary>
  >;
}
