import { BadInputError } from '../errors.js';
import {
  checkInput,
  DEFAULT_ENTROPY_TOLERANCE,
  isValid,
  LOW_HEAD_RATIO,
  resolveMassFlow,
  resolveShaftPower,
  saturationAt,
  secondLawFlags,
} from './common.js';
import type { MachineFlag, MachineInput, MachineResult } from './types.js';

/** Standard acceleration of gravity [m/s2] (ISO 80000-3). */
export const STANDARD_GRAVITY = 9.80665;

/**
 * Pump. Pressures are taken as total pressures at the flanges (velocity and elevation terms
 * included by the caller). Head H = dp / (rho g) with rho the inlet density; hydraulic power
 * = m dp / rho; hydraulic efficiency = hydraulic power / shaft power. The ISO 5198 thermodynamic
 * method gives eta = w_s / (h2 - h1), with h2 - h1 from the measured temperature rise and
 * w_s = h(p2, s1) - h1 (equal to v dp for an incompressible liquid).
 */
export function evaluatePump(given: MachineInput): MachineResult {
  const input = checkInput(given);
  const { fluid, inlet: i, outlet: o } = input;
  if (o.p < i.p) {
    throw new BadInputError('outlet.p', `pump outlet pressure ${o.p} Pa is below inlet pressure ${i.p} Pa`);
  }
  const flags: MachineFlag[] = [];
  const tSatIn = saturationAt(fluid, i.p);
  if (tSatIn !== undefined && i.T >= tSatIn) {
    // At or above saturation p and T give steam (or nothing definite): a pump inlet reading
    // there is a transmitter fault or a flashing suction, never a state to compute with.
    flags.push('inlet-undetermined');
  }
  const inlet = fluid.statePT(i.p, i.T);
  const outlet = fluid.statePT(o.p, o.T);
  const outletIsentropic = fluid.statePS(o.p, inlet.s);
  const massFlow = resolveMassFlow(input, inlet);
  const shaftPower = resolveShaftPower(input);
  if (flags.includes('inlet-undetermined')) {
    return {
      kind: 'pump',
      inlet,
      outlet,
      outletIsentropic,
      isentropicSpecificWork: outletIsentropic.h - inlet.h,
      massFlow,
      shaftPowerUsed: shaftPower,
      flags,
      valid: false,
    };
  }
  if (massFlow === 0) flags.push('no-flow');
  if (o.p / i.p < LOW_HEAD_RATIO) flags.push('low-head');
  const dp = o.p - i.p;
  const rho = 1 / inlet.v;
  const head = dp / (rho * STANDARD_GRAVITY);
  const hydraulicPower = massFlow === undefined ? undefined : (massFlow * dp) / rho;
  const hydraulicEfficiency =
    hydraulicPower !== undefined && shaftPower !== undefined && shaftPower > 0 && massFlow !== 0
      ? hydraulicPower / shaftPower
      : undefined;
  const specificWork = outlet.h - inlet.h;
  const isentropicSpecificWork = outletIsentropic.h - inlet.h;
  if (outlet.T < outletIsentropic.T) flags.push('outlet-colder-than-isentropic');
  let thermodynamicEfficiency: number | undefined;
  if (specificWork > 0 && dp > 0) thermodynamicEfficiency = isentropicSpecificWork / specificWork;
  else flags.push('no-work');
  const entropyGeneration = outlet.s - inlet.s;
  const tolerance = input.entropyTolerance ?? DEFAULT_ENTROPY_TOLERANCE;
  secondLawFlags(flags, entropyGeneration, thermodynamicEfficiency, tolerance);
  if (
    hydraulicEfficiency !== undefined &&
    hydraulicEfficiency > 1 + 1e-9 &&
    !flags.includes('efficiency-above-one')
  ) {
    flags.push('efficiency-above-one');
  }
  return {
    kind: 'pump',
    inlet,
    outlet,
    outletIsentropic,
    isentropicEfficiency: thermodynamicEfficiency,
    specificWork,
    isentropicSpecificWork,
    power: massFlow === undefined ? undefined : massFlow * specificWork,
    entropyGeneration,
    massFlow,
    shaftPowerUsed: shaftPower,
    head,
    hydraulicPower,
    hydraulicEfficiency,
    thermodynamicEfficiency,
    flags,
    valid: isValid(flags),
  };
}
