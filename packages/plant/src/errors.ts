/** Errors of the plant package: data first (code, file, each problem with its path). */

export type PlantErrorCode = 'PLANT_FILE_INVALID' | 'PLANT_FILE_UNREADABLE';

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
      `${fileName}: ${issues.length} problem${issues.length === 1 ? '' : 's'}\n` +
        issues.map((i) => `  ${i.path === '' ? '(file)' : i.path}: ${i.message}`).join('\n'),
    );
    this.name = 'PlantFileError';
    this.code = code;
  }
}
