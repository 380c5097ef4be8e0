/**
 * What the suite's senders sent: every value with its tag and source time, kept in memory
 * and appended to a JSON-lines file so a failed run can be examined afterwards.
 */
import { createWriteStream, type WriteStream } from 'node:fs';

export type Via = 'csv' | 'push' | 'opcua';

export interface SentValue {
  readonly tag: string;
  /** Source time [ms, UTC]. */
  readonly time: number;
  readonly value: number;
  readonly via: Via;
  /** OPC UA only: a live client (open channel, active session) had monitored items when it was set. */
  readonly listened?: boolean;
}

export class SentLog {
  readonly values: SentValue[] = [];
  private readonly out: WriteStream;

  constructor(file: string) {
    this.out = createWriteStream(file, { flags: 'w' });
  }

  add(v: SentValue): void {
    this.values.push(v);
    this.out.write(`${JSON.stringify(v)}\n`);
  }

  close(): Promise<void> {
    return new Promise((resolve) => this.out.end(() => resolve()));
  }
}
