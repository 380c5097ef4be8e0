/** Errors of the plant package: data first (code, file, each problem with its path). */
import { type ErrorCatalog, formatError } from '@isentrope/errors';

/** Every code of packages/plant, once; see ERRORS.md. */
export const PLANT_ERRORS = {
  PLANT_FILE_INVALID: {
    meaning: 'The plant file does not match the plant schema; every problem is listed with its path.',
    template: '{fileName}: {count} problem{plural}\n{problems}',
    status: 400,
  },
  PLANT_FILE_UNREADABLE: {
    meaning: 'The plant file cannot be read or is not YAML.',
    template: '{fileName}: {count} problem{plural}\n{problems}',
    status: 400,
  },
} as const satisfies ErrorCatalog;

export type PlantErrorCode = keyof typeof PLANT_ERRORS;

/** One problem in a plant file: where it is (e.g. "machines[2].tags[0].unit") and what is wrong. */
export interface PlantFileIssue {
  readonly path: string;
  readonly message: string;
}

/** A plant file that cannot be used; lists every problem found, not only the first. */
export class PlantFileError extends Error {
  readonly code: PlantErrorCode;
  constructor(
    readonly fileName: string,
    readonly issues: readonly PlantFileIssue[],
    code: PlantErrorCode = 'PLANT_FILE_INVALID',
  ) {
    super(
      formatError(PLANT_ERRORS, code, {
        fileName,
        count: issues.length,
        plural: issues.length === 1 ? '' : 's',
        problems: issues.map((i) => `  ${i.path === '' ? '(file)' : i.path}: ${i.message}`).join('\n'),
      }),
    );
    this.name = 'PlantFileError';
    this.code = code;
  }
}
