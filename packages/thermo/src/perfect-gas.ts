import { BadInputError } from './errors.js';
import type { Fluid, FluidState } from './fluid.js';

/**
 * An ideal gas with constant heat capacity: the textbook limit used to check machine
 * models exactly (T_out,s = T_in (p_out/p_in)^((k-1)/k) holds to rounding). Reference
 * state: h = 0 and s = 0 at T_ref = 298.15 K, p_ref = 101325 Pa.
 */
export function perfectGas(
  /** Specific gas constant R [J/(kg K)]. */
  R: number,
  /** Isobaric specific heat capacity cp [J/(kg K)]. */
  cp: number,
  name = 'perfect gas',
): Fluid {
  if (!(R > 0) || !(cp > R)) {
    throw new BadInputError('perfectGas', `needs R > 0 and cp > R, got R = ${R}, cp = ${cp} J/(kg K)`);
  }
  const Tref = 298.15;
  const pref = 101_325;
  const state = (p: number, T: number): FluidState => ({
    p,
    T,
    h: cp * (T - Tref),
    s: cp * Math.log(T / Tref) - R * Math.log(p / pref),
    v: (R * T) / p,
  });
  return {
    name,
    kind: 'gas',
    statePT: state,
    statePH: (p, h) => state(p, Tref + h / cp),
    statePS: (p, s) => state(p, Tref * Math.exp((s + R * Math.log(p / pref)) / cp)),
  };
}
