import { BadInputError } from './errors.js';
import type { Fluid, FluidState } from './fluid.js';

/**
 * An incompressible liquid with constant density and heat capacity (the textbook model:
 * du = c dT, dh = c dT + v dp, ds = c dT / T). Isentropic is isothermal, so w_s = v dp exactly,
 * and an isobar on the h-s chart has slope T. Reference state: h = 0 and s = 0 at
 * T_ref = 298.15 K, p_ref = 101325 Pa. For pumps moving oils, brines or process liquids.
 */
export function incompressibleLiquid(
  /** Density rho [kg/m3]. */
  density: number,
  /** Specific heat capacity c [J/(kg K)]. */
  cp: number,
  name = 'incompressible liquid',
): Fluid {
  if (!(density > 0) || !Number.isFinite(density)) {
    throw new BadInputError('liquid.density', `must be a finite number > 0 kg/m3, got ${density}`);
  }
  if (!(cp > 0) || !Number.isFinite(cp)) {
    throw new BadInputError('liquid.cp', `must be a finite number > 0 J/(kg K), got ${cp}`);
  }
  const Tref = 298.15;
  const pref = 101_325;
  const v = 1 / density;
  const state = (p: number, T: number): FluidState => ({
    p,
    T,
    h: cp * (T - Tref) + v * (p - pref),
    s: cp * Math.log(T / Tref),
    v,
  });
  return {
    name,
    kind: 'liquid',
    statePT: state,
    statePH: (p, h) => state(p, Tref + (h - v * (p - pref)) / cp),
    statePS: (p, s) => state(p, Tref * Math.exp(s / cp)),
  };
}
