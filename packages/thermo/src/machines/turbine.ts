import { BadInputError } from '../errors.js';
import type { FluidState } from '../fluid.js';
import {
  checkInput,
  DEFAULT_ENTROPY_TOLERANCE,
  DEFAULT_WET_MARGIN,
  isValid,
  resolveMassFlow,
  resolveShaftPower,
  saturationAt,
  secondLawFlags,
} from './common.js';
import type { MachineFlag, MachineInput, MachineResult } from './types.js';

/**
 * Turbine or expander (steam or gas). Isentropic efficiency eta_s = (h_in - h_out)/(h_in - h_out,s)
 * with h_out,s = h(p_out, s_in). A steam outlet at or near saturation is not fixed by p and T:
 * h_out then comes from the energy balance h_out = h_in - P_shaft / m (adiabatic casing; bearing
 * and gland losses neglected, which makes the efficiency slightly low), or the outlet is reported
 * undetermined. Never a guess.
 */
export function evaluateTurbine(given: MachineInput): MachineResult {
  const input = checkInput(given);
  const { fluid, inlet: i, outlet: o } = input;
  if (o.p > i.p) {
    throw new BadInputError(
      'outlet.p',
      `turbine outlet pressure ${o.p} Pa is above inlet pressure ${i.p} Pa`,
    );
  }
  const flags: MachineFlag[] = [];
  const wetMargin = input.wetMargin ?? DEFAULT_WET_MARGIN;
  const inlet = fluid.statePT(i.p, i.T);
  const outletIsentropic = fluid.statePS(o.p, inlet.s);
  const isentropicSpecificWork = inlet.h - outletIsentropic.h;
  const massFlow = resolveMassFlow(input, inlet);
  const shaftPower = resolveShaftPower(input);
  if (massFlow === 0) flags.push('no-flow');

  const tSatIn = saturationAt(fluid, i.p);
  if (tSatIn !== undefined && i.T <= tSatIn) {
    // A turbine inlet at or below saturation: p and T do not fix a wet inlet.
    flags.push('inlet-undetermined');
    return {
      kind: 'turbine',
      inlet,
      outlet: fluid.statePT(o.p, o.T),
      outletIsentropic,
      isentropicSpecificWork,
      massFlow,
      shaftPowerUsed: shaftPower,
      flags,
      valid: false,
    };
  }

  let outlet: FluidState;
  const tSatOut = saturationAt(fluid, o.p);
  const possiblyWet =
    input.outletFrom === undefined
      ? tSatOut !== undefined && o.T <= tSatOut + wetMargin
      : input.outletFrom === 'energy-balance';
  if (possiblyWet) {
    if (shaftPower !== undefined && massFlow !== undefined && massFlow > 0) {
      flags.push('wet-outlet-energy-balance');
      outlet = fluid.statePH(o.p, inlet.h - shaftPower / massFlow);
    } else {
      flags.push('outlet-undetermined');
      return {
        kind: 'turbine',
        inlet,
        // Only the measured p and T are known: the rest is NaN, never a guess.
        outlet: { p: o.p, T: o.T, h: Number.NaN, s: Number.NaN, v: Number.NaN },
        outletIsentropic,
        isentropicSpecificWork,
        massFlow,
        shaftPowerUsed: shaftPower,
        flags,
        valid: false,
      };
    }
  } else {
    outlet = fluid.statePT(o.p, o.T);
  }

  const specificWork = inlet.h - outlet.h;
  const isentropicEfficiency = isentropicSpecificWork > 0 ? specificWork / isentropicSpecificWork : undefined;
  if (isentropicSpecificWork <= 0) flags.push('no-work');
  const entropyGeneration = outlet.s - inlet.s;
  secondLawFlags(
    flags,
    entropyGeneration,
    isentropicEfficiency,
    input.entropyTolerance ?? DEFAULT_ENTROPY_TOLERANCE,
  );
  return {
    kind: 'turbine',
    inlet,
    outlet,
    outletIsentropic,
    isentropicEfficiency,
    specificWork,
    isentropicSpecificWork,
    power: massFlow === undefined ? undefined : massFlow * specificWork,
    entropyGeneration,
    massFlow,
    shaftPowerUsed: shaftPower,
    flags,
    valid: isValid(flags),
  };
}
