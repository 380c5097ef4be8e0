/** Every code of the command line (services/cli), once; see ERRORS.md. */
import type { ErrorCatalog } from '@isentrope/errors';

export const CLI_ERRORS = {
  CONFIG_INVALID: {
    meaning:
      'One or more environment settings cannot be used; each bad variable is listed with its value and the problem.',
    template: 'The environment has {count} bad setting{plural}:\n{problems}',
  },
  CLI_BAD_CASE: {
    meaning:
      'A calculation case for `isentrope calc` that cannot be computed; each problem is named by its path.',
    template: '{problems}',
  },
} as const satisfies ErrorCatalog;

export type CliErrorCode = keyof typeof CLI_ERRORS;
