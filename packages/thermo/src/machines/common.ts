import { BadInputError, OutOfRangeError } from '../errors.js';
import type { Fluid, FluidState } from '../fluid.js';
import { INSTRUMENT_FAULT_FLAGS, type MachineFlag, type MachineInput } from './types.js';

/** Default wet margin [K]: common practice, no source. */
export const DEFAULT_WET_MARGIN = 2;
/** Default entropy tolerance [J/(kg K)]: the order of IF97 forward/backward consistency. */
export const DEFAULT_ENTROPY_TOLERANCE = 0.01;
/** Below this pressure ratio the efficiency from temperatures is ill-conditioned (common practice, no source). */
export const LOW_HEAD_RATIO = 1.001;

function finite(field: string, value: number): void {
  if (!Number.isFinite(value)) throw new BadInputError(field, `must be a finite number, got ${value}`);
}

/** An optional flow or power: absent, or finite and >= 0. */
function nonNegative(field: string, value: number | undefined): void {
  if (value === undefined) return;
  finite(field, value);
  if (value < 0) throw new BadInputError(field, `must be >= 0, got ${value}`);
}

function positive(field: string, value: number): void {
  finite(field, value);
  if (!(value > 0)) throw new BadInputError(field, `must be > 0, got ${value}`);
}

const INF = Number.POSITIVE_INFINITY;

/** Every check of detailedChecks passes (finite numbers only; NaN fails every comparison). */
function usualInput(input: MachineInput): boolean {
  const { inlet, outlet, massFlow, volumeFlow, shaftPower, electricalPower } = input;
  const { driverEfficiency, wetMargin, entropyTolerance } = input;
  return (
    inlet.p > 0 &&
    inlet.p < INF &&
    inlet.T > 0 &&
    inlet.T < INF &&
    outlet.p > 0 &&
    outlet.p < INF &&
    outlet.T > 0 &&
    outlet.T < INF &&
    (massFlow === undefined || (massFlow >= 0 && massFlow < INF)) &&
    (volumeFlow === undefined || (volumeFlow >= 0 && volumeFlow < INF)) &&
    (shaftPower === undefined || (shaftPower >= 0 && shaftPower < INF)) &&
    (electricalPower === undefined || (electricalPower >= 0 && electricalPower < INF)) &&
    (driverEfficiency === undefined || (driverEfficiency > 0 && driverEfficiency <= 1)) &&
    (wetMargin === undefined || (wetMargin >= 0 && wetMargin < INF)) &&
    (entropyTolerance === undefined || (entropyTolerance >= 0 && entropyTolerance < INF))
  );
}

/** Throws for the first field that is not a finite number in its range, naming it. */
function detailedChecks(input: MachineInput): void {
  positive('inlet.p', input.inlet.p);
  positive('inlet.T', input.inlet.T);
  positive('outlet.p', input.outlet.p);
  positive('outlet.T', input.outlet.T);
  nonNegative('massFlow', input.massFlow);
  nonNegative('volumeFlow', input.volumeFlow);
  nonNegative('shaftPower', input.shaftPower);
  nonNegative('electricalPower', input.electricalPower);
  if (input.driverEfficiency !== undefined) {
    positive('driverEfficiency', input.driverEfficiency);
    if (input.driverEfficiency > 1) {
      throw new BadInputError('driverEfficiency', `is a fraction in (0, 1], got ${input.driverEfficiency}`);
    }
  }
  if (input.wetMargin !== undefined) {
    finite('wetMargin', input.wetMargin);
    if (input.wetMargin < 0) throw new BadInputError('wetMargin', `must be >= 0 K, got ${input.wetMargin}`);
  }
  if (input.entropyTolerance !== undefined) {
    finite('entropyTolerance', input.entropyTolerance);
    if (input.entropyTolerance < 0) {
      throw new BadInputError('entropyTolerance', `must be >= 0, got ${input.entropyTolerance}`);
    }
  }
}

/**
 * Rejects non-numbers and impossible values, with the field named, and returns the input as an
 * object of one fixed shape: callers build inputs many ways (literals, spreads), and the machine
 * functions run several times faster when every input they see has the same shape (measured).
 */
export function checkInput(given: MachineInput): MachineInput {
  const input: MachineInput = {
    kind: given.kind,
    fluid: given.fluid,
    inlet: given.inlet,
    outlet: given.outlet,
    massFlow: given.massFlow,
    volumeFlow: given.volumeFlow,
    shaftPower: given.shaftPower,
    electricalPower: given.electricalPower,
    driverEfficiency: given.driverEfficiency,
    wetMargin: given.wetMargin,
    entropyTolerance: given.entropyTolerance,
    outletFrom: given.outletFrom,
  };
  // One comparison chain for the usual case (NaN fails every comparison); the checks that name
  // the field run only when it fails. As helper calls on every evaluation they cost as much as
  // the model on the compute bench (measured, 11-13 against 6-6.5 us a machine-point).
  if (!usualInput(input)) detailedChecks(input);
  return input;
}

/** Mass flow [kg/s] from massFlow, or from volumeFlow [m3/s] and the inlet specific volume [m3/kg]. */
export function resolveMassFlow(input: MachineInput, inlet: FluidState): number | undefined {
  if (input.massFlow !== undefined) return input.massFlow;
  if (input.volumeFlow !== undefined) return input.volumeFlow / inlet.v;
  return undefined;
}

/** Shaft power [W] from shaftPower, or from electricalPower and driverEfficiency. */
export function resolveShaftPower(input: MachineInput): number | undefined {
  if (input.shaftPower !== undefined) return input.shaftPower;
  if (input.electricalPower === undefined) return undefined;
  const eta = input.driverEfficiency;
  if (eta === undefined) {
    // Never assume a driver efficiency: the caller must say it (1 for a direct measurement).
    throw new BadInputError(
      'driverEfficiency',
      'is required when electricalPower is given without shaftPower',
    );
  }
  return input.kind === 'turbine' ? input.electricalPower / eta : input.electricalPower * eta;
}

/** Second-law and efficiency checks shared by every machine. */
export function secondLawFlags(
  flags: MachineFlag[],
  entropyGeneration: number | undefined,
  efficiency: number | undefined,
  tolerance: number,
): void {
  if (entropyGeneration !== undefined && entropyGeneration < -tolerance) flags.push('second-law-violation');
  // 1e-9 absorbs rounding at an exact efficiency of one (a perfect-gas check).
  if (efficiency !== undefined && efficiency > 1 + 1e-9) flags.push('efficiency-above-one');
}

export function isValid(flags: readonly MachineFlag[]): boolean {
  return !flags.some(
    (f) => INSTRUMENT_FAULT_FLAGS.has(f) || f === 'outlet-undetermined' || f === 'inlet-undetermined',
  );
}

/**
 * Saturation temperature [K] at p [Pa], or undefined when the fluid has no two-phase region or p
 * lies outside the saturation line (above the critical pressure: a supercritical state is single
 * phase, so p and T fix it).
 */
export function saturationAt(fluid: Fluid, p: number): number | undefined {
  if (fluid.saturationTemperature === undefined) return undefined;
  try {
    return fluid.saturationTemperature(p);
  } catch (error) {
    if (error instanceof OutOfRangeError) return undefined;
    throw error;
  }
}
