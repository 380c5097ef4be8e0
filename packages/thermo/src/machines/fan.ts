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
import type { MachineFlag, MachineInput, MachineResult } from './types.js';

/**
 * ISO 5801 compressibility coefficient k_p = (ln(1+x)/x) (z/ln(1+z)), with
 * x = p_F / p_1 and z = ((kappa-1)/kappa) P_r / (q_V1 p_1).
 */
export function compressibilityCoefficient(
  /** Fan pressure (rise) p_F [Pa]. */ fanPressure: number,
  /** Inlet absolute (stagnation) pressure p_1 [Pa]. */ inletPressure: number,
  /** Impeller (shaft) power P_r [W]. */ impellerPower: number,
  /** Inlet volume flow q_V1 [m3/s]. */ inletVolumeFlow: number,
  /** Isentropic exponent kappa. */ kappa: number,
): number {
  const x = fanPressure / inletPressure;
  const z = (((kappa - 1) / kappa) * impellerPower) / (inletVolumeFlow * inletPressure);
  if (!(x > 0) || !(z > 0)) {
    throw new BadInputError('compressibilityCoefficient', `needs x > 0 and z > 0, got x = ${x}, z = ${z}`);
  }
  // log1p keeps the small-x limit (k_p -> 1) accurate.
  return (Math.log1p(x) / x) * (z / Math.log1p(z));
}

/**
 * Fan. Given total pressures, fanPressureRise is the fan total pressure. Air power
 * P_u = q_V1 p_F k_p (ISO 5801); fan efficiency = P_u / shaft power. kappa is the isentropic
 * volume exponent of the fluid model over the process, ln(p2/p1)/ln(v1/v2s) (1.4 for ideal air
 * at constant heat capacity). Without shaft power, P_r in z comes from m (h2 - h1).
 */
export function evaluateFan(given: MachineInput): MachineResult {
  const input = checkInput(given);
  const { fluid, inlet: i, outlet: o } = input;
  if (o.p < i.p) {
    throw new BadInputError('outlet.p', `fan outlet pressure ${o.p} Pa is below inlet pressure ${i.p} Pa`);
  }
  const flags: MachineFlag[] = [];
  const inlet = fluid.statePT(i.p, i.T);
  const outlet = fluid.statePT(o.p, o.T);
  const outletIsentropic = fluid.statePS(o.p, inlet.s);
  const massFlow = resolveMassFlow(input, inlet);
  const shaftPower = resolveShaftPower(input);
  if (massFlow === 0) flags.push('no-flow');
  if (o.p / i.p < LOW_HEAD_RATIO) flags.push('low-head');
  const fanPressureRise = o.p - i.p;
  const specificWork = outlet.h - inlet.h;
  const isentropicSpecificWork = outletIsentropic.h - inlet.h;
  if (outlet.T < outletIsentropic.T) flags.push('outlet-colder-than-isentropic');
  let isentropicEfficiency: number | undefined;
  if (specificWork > 0 && fanPressureRise > 0) isentropicEfficiency = isentropicSpecificWork / specificWork;
  else flags.push('no-work');

  let airPower: number | undefined;
  let kp: number | undefined;
  let fanEfficiency: number | undefined;
  if (massFlow !== undefined && massFlow > 0 && fanPressureRise > 0) {
    const qV1 = massFlow * inlet.v;
    const kappa = Math.log(o.p / i.p) / Math.log(inlet.v / outletIsentropic.v);
    const impellerPower = shaftPower ?? (specificWork > 0 ? massFlow * specificWork : undefined);
    if (impellerPower !== undefined && impellerPower > 0) {
      kp = compressibilityCoefficient(fanPressureRise, i.p, impellerPower, qV1, kappa);
      airPower = qV1 * fanPressureRise * kp;
      if (shaftPower !== undefined) fanEfficiency = airPower / shaftPower;
    }
  }
  const entropyGeneration = outlet.s - inlet.s;
  secondLawFlags(
    flags,
    entropyGeneration,
    isentropicEfficiency,
    input.entropyTolerance ?? DEFAULT_ENTROPY_TOLERANCE,
  );
  if (fanEfficiency !== undefined && fanEfficiency > 1 + 1e-9 && !flags.includes('efficiency-above-one')) {
    flags.push('efficiency-above-one');
  }
  return {
    kind: 'fan',
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
    fanPressureRise,
    airPower,
    compressibilityCoefficient: kp,
    fanEfficiency,
    flags,
    valid: isValid(flags),
  };
}
