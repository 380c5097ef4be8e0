import { ThermoError } from '../errors.js';

/** A species name (or alias) that the gas tables do not hold. */
export class UnknownSpeciesError extends ThermoError {
  readonly code = 'GAS_UNKNOWN_SPECIES';
  constructor(
    readonly species: string,
    /** Accepted species names with their aliases, e.g. "n-C4H10 (nC4, butane, n-butane)". */
    readonly accepted: readonly string[],
  ) {
    super(`Unknown gas species "${species}". Accepted: ${accepted.join('; ')}.`);
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
      reason ??
        `Mole fractions add up to ${sum}, expected ${expected} within ${tolerance * 100} %: ` +
          'check the gas analysis (a missing or doubled component?).',
    );
    this.name = 'CompositionSumError';
  }
}
