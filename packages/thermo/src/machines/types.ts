import type { Fluid, FluidState } from '../fluid.js';

export type MachineKind = 'turbine' | 'compressor' | 'pump' | 'fan';

/** Measured pressure [Pa] (absolute; total pressure for fans and pumps) and temperature [K]. */
export interface PressureTemperature {
  readonly p: number;
  readonly T: number;
}

export interface MachineInput {
  readonly kind: MachineKind;
  readonly fluid: Fluid;
  readonly inlet: PressureTemperature;
  readonly outlet: PressureTemperature;
  /** Mass flow [kg/s]; wins over volumeFlow when both are given. */
  readonly massFlow?: number | undefined;
  /** Actual volume flow at the inlet [m3/s], turned into mass flow with the inlet density. */
  readonly volumeFlow?: number | undefined;
  /** Shaft power [W]; wins over electricalPower when both are given. */
  readonly shaftPower?: number | undefined;
  /** Electrical power [W] at the motor terminals (driven machines) or generator terminals (turbine). */
  readonly electricalPower?: number | undefined;
  /**
   * Motor or gearbox efficiency (fraction, 0 < eta <= 1): shaft = electrical x eta for a driven
   * machine; shaft = electrical / eta for a turbine driving a generator. Required with electricalPower.
   */
  readonly driverEfficiency?: number | undefined;
  /** Margin [K] above saturation inside which a steam outlet counts as possibly wet (default 2 K). */
  readonly wetMargin?: number | undefined;
  /**
   * Entropy generation [J/(kg K)] below -tolerance counts as a second-law violation when no
   * uncertainty is known (default 0.01 J/(kg K), the order of IF97 forward/backward consistency).
   */
  readonly entropyTolerance?: number | undefined;
  /**
   * Turbines with a saturation line: where the outlet enthalpy comes from, instead of deciding by
   * wetMargin. Set by the uncertainty propagation so perturbed points stay on the base point's
   * branch (a reading 1 K across the margin must not jump between methods); rarely needed otherwise.
   */
  readonly outletFrom?: 'temperature' | 'energy-balance' | undefined;
}

/**
 * Flags. Instrument faults (see INSTRUMENT_FAULT_FLAGS) make a result not valid; the rest are
 * notes on how the figures were obtained.
 */
export type MachineFlag =
  /** Steam outlet at or within wetMargin of saturation: h_out from shaft power / mass flow. */
  | 'wet-outlet-energy-balance'
  /** Steam outlet possibly wet and no power and flow to close the energy balance: no efficiency. */
  | 'outlet-undetermined'
  /** Turbine inlet at or below saturation, or pump inlet at or above it: p and T fix no usable state. */
  | 'inlet-undetermined'
  /** s_out < s_in beyond its uncertainty (or beyond entropyTolerance): an adiabatic machine cannot. */
  | 'second-law-violation'
  /** Compressor, pump or fan outlet colder than the isentropic outlet. */
  | 'outlet-colder-than-isentropic'
  | 'efficiency-above-one'
  /** Mass flow is zero: no power, no power-based efficiency. */
  | 'no-flow'
  /** Pressure ratio below 1.001: efficiencies from temperatures are ill-conditioned. */
  | 'low-head'
  /** Outlet state not changed by the machine (h_out = h_in): no efficiency. */
  | 'no-work';

export const INSTRUMENT_FAULT_FLAGS: ReadonlySet<MachineFlag> = new Set<MachineFlag>([
  'second-law-violation',
  'outlet-colder-than-isentropic',
  'efficiency-above-one',
]);

export interface MachineResult {
  readonly kind: MachineKind;
  readonly inlet: FluidState;
  readonly outlet: FluidState;
  /** State at the outlet pressure with the inlet entropy. */
  readonly outletIsentropic: FluidState;
  /** Isentropic efficiency (fraction); undefined when not determinable. */
  readonly isentropicEfficiency?: number | undefined;
  /** Specific work [J/kg], positive out of a turbine and into a compressor, pump or fan. */
  readonly specificWork?: number | undefined;
  /** Isentropic specific work [J/kg], same sign convention. */
  readonly isentropicSpecificWork: number;
  /** Power exchanged with the fluid [W] = mass flow x specific work. */
  readonly power?: number | undefined;
  /** s_out - s_in [J/(kg K)]. */
  readonly entropyGeneration?: number | undefined;
  /** Mass flow used [kg/s]. */
  readonly massFlow?: number | undefined;
  /** Shaft power used [W] (measured, or from electrical power and driver efficiency). */
  readonly shaftPowerUsed?: number | undefined;
  // Compressors (Schultz 1962, as used in ASME PTC 10)
  readonly polytropicEfficiency?: number | undefined;
  /** Polytropic head [J/kg]. */
  readonly polytropicHead?: number | undefined;
  readonly polytropicExponent?: number | undefined;
  /** Schultz polytropic work factor f (1 for an ideal gas). */
  readonly schultzFactor?: number | undefined;
  // Pumps
  /** Pump head [m] = dp / (rho g), rho the inlet density. */
  readonly head?: number | undefined;
  /** Hydraulic power [W] = mass flow x dp / rho. */
  readonly hydraulicPower?: number | undefined;
  /** Hydraulic power / shaft power. */
  readonly hydraulicEfficiency?: number | undefined;
  /** ISO 5198 thermodynamic method: w_s / (h2 - h1). */
  readonly thermodynamicEfficiency?: number | undefined;
  // Fans (ISO 5801)
  /** Fan pressure rise [Pa] (difference of the given pressures; total pressures give fan total pressure). */
  readonly fanPressureRise?: number | undefined;
  /** Fan air power [W] = q_V1 p_F k_p. */
  readonly airPower?: number | undefined;
  /** ISO 5801 compressibility coefficient k_p. */
  readonly compressibilityCoefficient?: number | undefined;
  /** Fan air power / shaft power. */
  readonly fanEfficiency?: number | undefined;
  readonly flags: readonly MachineFlag[];
  /** False when an instrument-fault flag is raised, or when the outlet is undetermined. */
  readonly valid: boolean;
}
