/**
 * Errors raised by the pure calculation core. They are data (a stable code plus the values
 * involved), turned into text from THERMO_ERRORS' templates, and into HTTP problems by the API
 * (status 422: the computation cannot be made with these inputs), never parsed back.
 */
import { type ErrorCatalog, formatError } from '@isentrope/errors';

/** Every code of packages/thermo (units and gases included), once; see ERRORS.md. */
export const THERMO_ERRORS = {
  THERMO_OUT_OF_RANGE: {
    meaning: 'An input lies outside the validity range of the formulation asked for (the limits are given).',
    template:
      "{quantity} = {value} {unit} is outside the range of {formulation} ({min} to {max} {unit}); check the tag's unit and the instrument.",
    status: 422,
  },
  THERMO_NO_CONVERGENCE: {
    meaning: 'An iteration did not converge within its cap.',
    template: '{solver} did not converge in {iterations} iterations (last residual {residual}).',
    status: 422,
  },
  THERMO_STATE_UNDETERMINED: {
    meaning:
      'The state asked for is not fixed by the inputs, or lies in a step of the gas model (a condensing state).',
    template:
      '{quantity} = {value} {unit} at p = {p} Pa falls in a step of {model} at T = {T} K (from {below} to {above} {unit}): a condensing state, outside this single-phase gas model.',
    status: 422,
  },
  THERMO_BAD_INPUT: {
    meaning:
      'An input is not a number, or the inputs do not fit together (the field and the reason are given).',
    template: '{field}: {reason}',
    status: 422,
  },
  UNIT_UNKNOWN: {
    meaning: 'A unit that the unit table does not hold, or an ambiguous one such as bare "psi".',
    template: 'Unknown unit "{unit}". {hint}Accepted: {accepted}.',
    status: 422,
  },
  UNIT_AMBIENT_REQUIRED: {
    meaning: "A gauge pressure without the site's ambient pressure (configured, or a barometer tag).",
    template:
      '{value} {unit} is a gauge pressure: give the ambient pressure [Pa] (configured, or a barometer tag) to turn it into an absolute pressure.',
    status: 422,
  },
  UNIT_BAD_QUANTITY: {
    meaning: 'A quantity that cannot be read, or that is physically impossible (below absolute zero ...).',
    template: '"{input}": {reason}',
    status: 422,
  },
  GAS_UNKNOWN_SPECIES: {
    meaning: 'A gas species name (or alias) that the gas tables do not hold.',
    template: 'Unknown gas species "{species}". Accepted: {accepted}.',
    status: 422,
  },
  GAS_COMPOSITION_SUM: {
    meaning: 'Mole fractions that do not add up to 1 (or 100 %) within the tolerance, or are negative.',
    template:
      'Mole fractions add up to {sum}, expected {expected} within {tolerancePercent} %: check the gas analysis (a missing or doubled component?).',
    status: 422,
  },
} as const satisfies ErrorCatalog;

export type ThermoErrorCode = keyof typeof THERMO_ERRORS;

/** The message of a thermo error, from its catalog template. */
export function thermoMessage(code: ThermoErrorCode, params: Parameters<typeof formatError>[2]): string {
  return formatError(THERMO_ERRORS, code, params);
}

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
    super(thermoMessage('THERMO_OUT_OF_RANGE', { quantity, value, unit, min, max, formulation }));
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
    super(thermoMessage('THERMO_NO_CONVERGENCE', { solver, iterations, residual }));
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
    super(thermoMessage('THERMO_BAD_INPUT', { field, reason }));
    this.name = 'BadInputError';
  }
}
