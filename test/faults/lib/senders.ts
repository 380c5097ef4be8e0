/**
 * The suite's own senders for the fault run: CSV files written as *.part and renamed, and
 * HTTP push batches retried until answered 200 (as a bridge does). Each logs every value
 * the moment it is first sent. Values invented.
 */
import { rename, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { CSV_TAGS, PUSH_TAGS } from './plant.js';
import { type Random, sleep } from './random.js';
import type { SentLog } from './sent.js';

export interface SenderFindings {
  /** Push answers other than 200 with their status, counted (503 while the database is down is expected). */
  readonly pushStatus: Map<number, number>;
  /** Items a 200 answer rejected (none expected: every item is good). */
  pushRejected: number;
  /** Batches given up after the retry deadline. */
  pushGivenUp: number;
}

export class CsvSender {
  private next = 0;
  private time: number;
  files = 0;

  constructor(
    private readonly folder: string,
    private readonly sent: SentLog,
    private readonly random: Random,
    startMs: number,
  ) {
    this.time = startMs;
  }

  /** Writes one file of rows (wide layout, ISO UTC times, 100 ms apart) and renames it into place. */
  async drop(rows: number): Promise<void> {
    const lines = [`timestamp,${CSV_TAGS.join(',')}`];
    for (let r = 0; r < rows; r++) {
      this.time += 100;
      const values = CSV_TAGS.map((tag) => {
        const value = this.random.value();
        this.sent.add({ tag, time: this.time, value, via: 'csv' });
        return String(value);
      });
      lines.push(`${new Date(this.time).toISOString()},${values.join(',')}`);
    }
    const name = `fault-${String(this.next++).padStart(5, '0')}.csv`;
    const part = join(this.folder, `${name}.part`);
    await writeFile(part, `${lines.join('\n')}\n`);
    await rename(part, join(this.folder, name));
    this.files++;
  }
}

export class PushSender {
  private time: number;
  private pending: { body: string; tries: number }[] = [];
  batches = 0;

  constructor(
    private readonly url: () => string,
    private readonly token: string,
    private readonly sent: SentLog,
    private readonly random: Random,
    startMs: number,
    readonly findings: SenderFindings,
  ) {
    this.time = startMs;
  }

  /** Makes a new batch (logged as sent) and queues it. */
  make(items: number): void {
    const batch: { tag: string; time: string; value: number }[] = [];
    for (let i = 0; i < items; i++) {
      this.time += 10;
      for (const tag of PUSH_TAGS) {
        const value = this.random.value();
        this.sent.add({ tag, time: this.time, value, via: 'push' });
        batch.push({ tag, time: new Date(this.time).toISOString(), value });
      }
    }
    this.pending.push({ body: JSON.stringify(batch), tries: 0 });
    this.batches++;
  }

  private chain: Promise<boolean> = Promise.resolve(true);

  /** Tries each queued batch once, in order; stops at the first that is not stored. One delivery at a time. */
  deliver(): Promise<boolean> {
    this.chain = this.chain.then(
      () => this.deliverQueued(),
      () => this.deliverQueued(),
    );
    return this.chain;
  }

  private async deliverQueued(): Promise<boolean> {
    while (this.pending.length > 0) {
      const head = this.pending[0]!;
      head.tries++;
      const status = await this.post(head.body);
      if (status !== 200) {
        this.findings.pushStatus.set(status, (this.findings.pushStatus.get(status) ?? 0) + 1);
        return false;
      }
      this.pending.shift();
    }
    return true;
  }

  private async post(body: string): Promise<number> {
    try {
      const r = await fetch(`${this.url()}/api/ingest/samples`, {
        method: 'POST',
        headers: { authorization: `Bearer ${this.token}`, 'content-type': 'application/json' },
        body,
        signal: AbortSignal.timeout(30_000),
      });
      const answer = (await r.json().catch(() => ({}))) as { rejected?: unknown[] };
      if (r.status === 200) this.findings.pushRejected += answer.rejected?.length ?? 0;
      return r.status;
    } catch {
      return 0; // no answer: the process is down or was killed mid-request
    }
  }

  /** Delivers everything still queued, retrying until deadlineMs. */
  async drain(deadlineMs: number): Promise<void> {
    const deadline = Date.now() + deadlineMs;
    while (this.pending.length > 0 && Date.now() < deadline) {
      if (!(await this.deliver())) await sleep(500);
    }
    this.findings.pushGivenUp += this.pending.length;
  }
}
