import type { Logger } from 'pino';

/**
 * Graceful shutdown: on SIGTERM or SIGINT stop taking work, then close what was opened,
 * newest first (HTTP before jobs, jobs before the pool, the pool before the embedded server).
 */
export class Lifecycle {
  private readonly closers: { name: string; close: () => Promise<void> }[] = [];
  private stopping: Promise<void> | undefined;

  constructor(private readonly logger: Logger) {}

  /** Register something to close at shutdown. */
  add(name: string, close: () => Promise<void>): void {
    this.closers.push({ name, close });
  }

  shutdown(reason: string): Promise<void> {
    this.stopping ??= (async () => {
      this.logger.info({ reason }, 'shutting down');
      for (const closer of [...this.closers].reverse()) {
        try {
          await closer.close();
          this.logger.debug({ part: closer.name }, 'closed');
        } catch (error) {
          this.logger.error({ err: error, part: closer.name }, 'failed to close cleanly');
        }
      }
      this.logger.info('stopped');
    })();
    return this.stopping;
  }

  /** Exit the process after a clean shutdown on SIGTERM or SIGINT. */
  handleSignals(): void {
    for (const signal of ['SIGTERM', 'SIGINT'] as const) {
      process.once(signal, () => {
        void this.shutdown(signal).then(() => process.exit(0));
      });
    }
  }
}
