/**
 * The one shape every property model presents to the machine models, so a turbine or a
 * compressor is computed the same way whatever fluid runs through it. SI units throughout.
 */

/** A thermodynamic state point. */
export interface FluidState {
  /** Pressure [Pa] (absolute). */
  readonly p: number;
  /** Temperature [K]. */
  readonly T: number;
  /** Specific enthalpy [J/kg]. */
  readonly h: number;
  /** Specific entropy [J/(kg K)]. */
  readonly s: number;
  /** Specific volume [m3/kg]. */
  readonly v: number;
  /** Vapour mass fraction inside the two-phase dome (0..1); undefined outside it. */
  readonly x?: number | undefined;
}

export type FluidKind = 'water' | 'gas' | 'liquid';

export interface Fluid {
  /** A short human name, e.g. "water (IAPWS-IF97)" or "natural gas (Peng-Robinson)". */
  readonly name: string;
  readonly kind: FluidKind;
  /** State from pressure [Pa] and temperature [K]. */
  statePT(p: number, T: number): FluidState;
  /** State from pressure [Pa] and specific enthalpy [J/kg]. */
  statePH(p: number, h: number): FluidState;
  /** State from pressure [Pa] and specific entropy [J/(kg K)]. */
  statePS(p: number, s: number): FluidState;
  /**
   * Saturation temperature [K] at pressure p [Pa] for fluids with a two-phase region
   * that the model covers (water); undefined for models without one.
   */
  saturationTemperature?(p: number): number;
}
