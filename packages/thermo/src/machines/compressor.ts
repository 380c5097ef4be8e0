import { BadInputError } from '../errors.js';
import {
  checkInput,
  DEFAULT_ENTROPY_TOLERANCE,
  isValid,
  LOW_HEAD_RATIO,
  resolveMassFlow,
  resolveShaftPower,
  secondLawFlags,
} from './common.js';
import { schultzPolytropic } from './schultz.js';
import type { MachineFlag, MachineInput, MachineResult } from './types.js';

/**
 * Gas compressor: eta_s = (h_out,s - h_in)/(h_out - h_in), polytropic head and efficiency by the
 * Schultz method (ASME PTC 10), power = mass flow x (h_out - h_in).
 */
export function evaluateCompressor(given: MachineInput): MachineResult {
  const input = checkInput(given);
  const { fluid, inlet: i, outlet: o } = input;
  if (o.p < i.p) {
    throw new BadInputError(
      'outlet.p',
      `compressor outlet pressure ${o.p} Pa is below inlet pressure ${i.p} Pa`,
    );
  }
  const flags: MachineFlag[] = [];
  const inlet = fluid.statePT(i.p, i.T);
  const outlet = fluid.statePT(o.p, o.T);
  const outletIsentropic = fluid.statePS(o.p, inlet.s);
  const massFlow = resolveMassFlow(input, inlet);
  const shaftPower = resolveShaftPower(input);
  if (massFlow === 0) flags.push('no-flow');
  if (o.p / i.p < LOW_HEAD_RATIO) flags.push('low-head');
  const specificWork = outlet.h - inlet.h;
  const isentropicSpecificWork = outletIsentropic.h - inlet.h;
  if (outlet.T < outletIsentropic.T) flags.push('outlet-colder-than-isentropic');
  let isentropicEfficiency: number | undefined;
  let poly: ReturnType<typeof schultzPolytropic> | undefined;
  if (specificWork > 0 && o.p > i.p) {
    isentropicEfficiency = isentropicSpecificWork / specificWork;
    poly = schultzPolytropic(inlet, outlet, outletIsentropic);
  } else {
    flags.push('no-work');
  }
  const entropyGeneration = outlet.s - inlet.s;
  secondLawFlags(
    flags,
    entropyGeneration,
    isentropicEfficiency,
    input.entropyTolerance ?? DEFAULT_ENTROPY_TOLERANCE,
  );
  return {
    kind: 'compressor',
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
    polytropicEfficiency: poly?.efficiency,
    polytropicHead: poly?.head,
    polytropicExponent: poly?.exponent,
    schultzFactor: poly?.factor,
    flags,
    valid: isValid(flags),
  };
}
