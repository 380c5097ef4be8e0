import { ThermoError, thermoMessage } from '../errors.js';

/** A unit string that is not in the table (or is ambiguous, like bare "psi"). */
export class UnitUnknownError extends ThermoError {
  readonly code = 'UNIT_UNKNOWN';
  constructor(
    /** The unit as it was given. */
    readonly unit: string,
    /** The units accepted for the dimension that was meant (or all units when unknown). */
    readonly accepted: readonly string[],
    /** Why it was refused, when there is more to say than "unknown". */
    readonly hint?: string,
  ) {
    super(
      thermoMessage('UNIT_UNKNOWN', { unit, hint: hint ? `${hint} ` : '', accepted: accepted.join(', ') }),
    );
    this.name = 'UnitUnknownError';
  }
}

/** A gauge pressure was given without the site's ambient (barometric) pressure. */
export class AmbientPressureRequiredError extends ThermoError {
  readonly code = 'UNIT_AMBIENT_REQUIRED';
  constructor(
    readonly unit: string,
    readonly value: number,
  ) {
    super(thermoMessage('UNIT_AMBIENT_REQUIRED', { value, unit }));
    this.name = 'AmbientPressureRequiredError';
  }
}

/** A quantity that cannot be read or that is physically impossible (below absolute zero, negative absolute pressure). */
export class BadQuantityError extends ThermoError {
  readonly code = 'UNIT_BAD_QUANTITY';
  constructor(
    /** The text or value that was refused. */
    readonly input: string,
    readonly reason: string,
  ) {
    super(thermoMessage('UNIT_BAD_QUANTITY', { input, reason }));
    this.name = 'BadQuantityError';
  }
}
