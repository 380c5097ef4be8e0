/** Test helper: a sink that records what it is given, and can fail like an unreachable database. */
import type { CommittedSampleSink, Sample, WriteReport } from '../types.js';

export class RecordingSink implements CommittedSampleSink {
  readonly stored: Sample[] = [];
  failing = false;

  async write(samples: readonly Sample[]): Promise<WriteReport> {
    if (this.failing) throw new Error('connection refused');
    this.stored.push(...samples);
    return { stored: samples.length, duplicates: 0, conflicts: [] };
  }

  async flush(): Promise<void> {}
}
