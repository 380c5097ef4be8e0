/** Errors of the store: a stable code, the values involved, and a readable message. */

import type { ErrorCatalog } from '@isentrope/errors';

/**
 * Every code of packages/store, once; see ERRORS.md. The message is written where the error is
 * raised (it names the sample, table or range), so the catalog gives meanings, not templates.
 */
export const STORE_ERRORS = {
  STORE_BAD_SAMPLE: {
    meaning:
      'A sample the writer cannot store (time, value or quality out of range); the index and values are given.',
  },
  STORE_WRITE_FAILED: {
    meaning: 'A batch of samples could not be written; nothing of the batch was stored.',
  },
  STORE_WRITER_CLOSED: { meaning: 'Samples were handed to a writer after it was closed.' },
  STORE_TIME_RANGE: { meaning: 'A time range that is empty, reversed or not finite.' },
  STORE_BAD_RETENTION: {
    meaning: 'A retention setting that cannot be used (not a positive number of days, or unknown table).',
  },
  STORE_BAD_REQUEST: {
    meaning: 'A read or maintenance call with arguments it cannot use (the argument is named).',
  },
  STORE_DATABASE_UNREACHABLE: { meaning: 'The database at DATABASE_URL does not answer.' },
  STORE_EMBEDDED_ACCESS: { meaning: 'The embedded PostgreSQL cannot reach its binaries or its data folder.' },
  STORE_EMBEDDED_IN_USE: {
    meaning: 'Another process already runs the embedded PostgreSQL of this data folder.',
  },
  STORE_MIGRATION_FAILED: {
    meaning: 'A migration failed and was rolled back; the file and the database message are given.',
  },
} as const satisfies ErrorCatalog;

export type StoreErrorCode = keyof typeof STORE_ERRORS;

export class StoreError extends Error {
  constructor(
    readonly code: StoreErrorCode,
    message: string,
    /** The values that made the call fail (sample index, table, range ...). */
    readonly details: Readonly<Record<string, unknown>> = {},
    options?: { cause?: unknown },
  ) {
    super(message, options);
    this.name = 'StoreError';
  }
}

/** What pg, pg.Pool and pg.PoolClient have in common that the readers need. */
export interface Queryable {
  query<R extends import('pg').QueryResultRow = import('pg').QueryResultRow>(
    text: string,
    values?: unknown[],
  ): Promise<import('pg').QueryResult<R>>;
}
