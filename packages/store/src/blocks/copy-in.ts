import { Readable } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import type pg from 'pg';
import { from as copyFrom } from 'pg-copy-streams';

/** Sends binary COPY data; returns the rows the server took. */
export async function copyIn(client: pg.ClientBase, sql: string, data: Buffer): Promise<number> {
  const stream = client.query(copyFrom(sql));
  await pipeline(Readable.from([data]), stream);
  return stream.rowCount ?? 0;
}
