import { ThermoError, thermoMessage } from '../errors.js';

/** A species name (or alias) that the gas tables do not hold. */
export class UnknownSpeciesError extends ThermoError {
  readonly code = 'GAS_UNKNOWN_SPECIES';
  constructor(
    readonly species: string,
    /** Accepted species names with their aliases, e.g. "n-C4H10 (nC4, butane, n-butane)". */
    readonly accepted: readonly string[],
  ) {
    super(thermoMessage('GAS_UNKNOWN_SPECIES', { species, accepted: accepted.join('; ') }));
    this.name = 'UnknownSpeciesError';
  }
}

/** Mole fractions that do not add up to 1 (or 100 %) within the tolerance, or that are negative. */
export class CompositionSumError extends ThermoError {
  readonly code = 'GAS_COMPOSITION_SUM';
  constructor(
    readonly sum: number,
    /** The sum expected: 1 for fractions, 100 for percent. */
    readonly expected: number,
    /** Allowed relative deviation, e.g. 0.01. */
    readonly tolerance: number,
    readonly reason?: string,
  ) {
    super(
      reason ?? thermoMessage('GAS_COMPOSITION_SUM', { sum, expected, tolerancePercent: tolerance * 100 }),
    );
    this.name = 'CompositionSumError';
  }
}

/**
 * h or s asked for lies in a step of the model along the isobar, so no temperature gives it: with
 * Peng-Robinson the vapour-like root ends (a condensing, two-phase state, which this single-phase
 * gas model does not represent). Reported rather than answered with the temperature of the step.
 */
export class GasStateUndeterminedError extends ThermoError {
  readonly code = 'THERMO_STATE_UNDETERMINED';
  constructor(
    /** "enthalpy h" [J/kg] or "entropy s" [J/(kg K)]. */
    readonly quantity: string,
    readonly value: number,
    readonly unit: string,
    /** Pressure of the isobar [Pa]. */
    readonly p: number,
    /** Temperature of the step [K]. */
    readonly T: number,
    /** The quantity just below and just above the step. */
    readonly below: number,
    readonly above: number,
    readonly model: string,
  ) {
    super(thermoMessage('THERMO_STATE_UNDETERMINED', { quantity, value, unit, p, T, below, above, model }));
    this.name = 'GasStateUndeterminedError';
  }
}
