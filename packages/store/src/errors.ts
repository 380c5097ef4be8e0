/** Errors of the store: a stable code, the values involved, and a readable message. */

export type StoreErrorCode =
  | 'STORE_BAD_SAMPLE'
  | 'STORE_WRITE_FAILED'
  | 'STORE_WRITER_CLOSED'
  | 'STORE_TIME_RANGE'
  | 'STORE_BAD_RETENTION'
  | 'STORE_BAD_REQUEST';

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
