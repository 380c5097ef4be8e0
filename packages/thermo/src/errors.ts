/**
 * Errors raised by the pure calculation core. They are data (a stable code plus the values
 * involved), turned into text here and into HTTP problems by the API, never parsed back.
 */

export type ThermoErrorCode =
  | 'THERMO_OUT_OF_RANGE'
  | 'THERMO_NO_CONVERGENCE'
  | 'THERMO_STATE_UNDETERMINED'
  | 'THERMO_BAD_INPUT'
  | 'UNIT_UNKNOWN'
  | 'UNIT_AMBIENT_REQUIRED'
  | 'UNIT_BAD_QUANTITY'
  | 'GAS_UNKNOWN_SPECIES'
  | 'GAS_COMPOSITION_SUM';

export abstract class ThermoError extends Error {
  abstract readonly code: ThermoErrorCode;
}

/** An input lies outside the validity range of the formulation that was asked for. */
export class OutOfRangeError extends ThermoError {
  readonly code = 'THERMO_OUT_OF_RANGE';
  constructor(
    /** What was out of range, e.g. "pressure p" or "temperature T". */
    readonly quantity: string,
    readonly value: number,
    readonly unit: string,
    readonly min: number,
    readonly max: number,
    /** The formulation whose limits apply, e.g. "IAPWS-IF97 region 2". */
    readonly formulation: string,
  ) {
    super(
      `${quantity} = ${value} ${unit} is outside the range of ${formulation} ` +
        `(${min} to ${max} ${unit}); check the tag's unit and the instrument.`,
    );
    this.name = 'OutOfRangeError';
  }
}

/** An iteration did not converge within its cap. */
export class ConvergenceError extends ThermoError {
  readonly code = 'THERMO_NO_CONVERGENCE';
  constructor(
    readonly solver: string,
    readonly iterations: number,
    readonly residual: number,
  ) {
    super(`${solver} did not converge in ${iterations} iterations (last residual ${residual}).`);
    this.name = 'ConvergenceError';
  }
}

/** Input that is not a number, or an inconsistent combination of inputs. */
export class BadInputError extends ThermoError {
  readonly code = 'THERMO_BAD_INPUT';
  constructor(
    readonly field: string,
    readonly reason: string,
  ) {
    super(`${field}: ${reason}`);
    this.name = 'BadInputError';
  }
}
