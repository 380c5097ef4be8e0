import type { Logger } from 'pino';

/** Time each part gets to stop before it is left behind [ms] (ISENTROPE_STOP_TIMEOUT). */
export const DEFAULT_STOP_DEADLINE_MS = 10_000;

export interface PartOptions {
  /** What the part is busy with, for the warning when it overruns its deadline. */
  readonly doing?: () => string | undefined;
  /** Stopped on a forced stop too (the embedded PostgreSQL server: it must not outlive us). */
  readonly evenWhenForced?: boolean;
}

interface Part extends PartOptions {
  readonly name: string;
  readonly close: () => Promise<void>;
}

/** How a shutdown went: clean when every part stopped in time without an error. */
export interface ShutdownOutcome {
  readonly clean: boolean;
  /** Parts that overran their deadline, still running when the process exits. */
  readonly leftBehind: readonly string[];
  /** Parts whose stop failed. */
  readonly failed: readonly string[];
}

/**
 * Graceful shutdown: on SIGTERM or SIGINT close what was opened, newest first (HTTP before jobs,
 * jobs before the pool, the pool before the embedded server), each part within a deadline; a part
 * that overruns is logged and left behind, so the database is always reached and the process
 * always ends. A second signal stops at once, stopping only the parts marked evenWhenForced.
 */
export class Lifecycle {
  private readonly parts: Part[] = [];
  private stopping: Promise<ShutdownOutcome> | undefined;
  private forcing: Promise<void> | undefined;
  private readonly deadlineMs: number;

  constructor(
    private readonly logger: Logger,
    options: { readonly deadlineMs?: number } = {},
  ) {
    this.deadlineMs = options.deadlineMs ?? DEFAULT_STOP_DEADLINE_MS;
  }

  /** Register something to close at shutdown. */
  add(name: string, close: () => Promise<void>, options: PartOptions = {}): void {
    this.parts.push({ name, close, ...options });
  }

  shutdown(reason: string): Promise<ShutdownOutcome> {
    this.stopping ??= (async () => {
      this.logger.info({ reason, deadlineMs: this.deadlineMs }, 'shutting down');
      const leftBehind: string[] = [];
      const failed: string[] = [];
      for (const part of [...this.parts].reverse()) {
        const result = await this.stopPart(part);
        if (result === 'overran') leftBehind.push(part.name);
        if (result === 'failed') failed.push(part.name);
      }
      const clean = leftBehind.length === 0 && failed.length === 0;
      if (clean) this.logger.info('stopped');
      else this.logger.warn({ leftBehind, failed }, 'stopped');
      return { clean, leftBehind, failed };
    })();
    return this.stopping;
  }

  /** Stop at once: only the parts marked evenWhenForced, newest first, each within the deadline. */
  forceStop(reason: string): Promise<void> {
    this.forcing ??= (async () => {
      const forced = this.parts.filter((part) => part.evenWhenForced === true).reverse();
      this.logger.warn(
        { reason, stopping: forced.map((part) => part.name) },
        'stopping at once; the other parts are left as they are',
      );
      for (const part of forced) await this.stopPart(part);
    })();
    return this.forcing;
  }

  /** What a SIGTERM or SIGINT does; resolves to the exit code: 0 after a clean stop, else 1. */
  async onSignal(signal: string): Promise<number> {
    if (this.stopping === undefined) {
      const { clean } = await this.shutdown(signal);
      // A second signal came meanwhile: its forced stop decides the exit.
      if (this.forcing !== undefined) await this.forcing;
      return clean && this.forcing === undefined ? 0 : 1;
    }
    await this.forceStop(`second signal (${signal})`);
    return 1;
  }

  /** Exit the process after a shutdown on SIGTERM or SIGINT; a second one exits at once. */
  handleSignals(): void {
    let guarded = false;
    for (const signal of ['SIGTERM', 'SIGINT'] as const) {
      process.on(signal, () => {
        if (!guarded) {
          guarded = true;
          // A part left behind may throw once the server under it stops (a checked-out client
          // cut off): while stopping that is expected, and must not end the process before the
          // embedded server has stopped.
          process.on('uncaughtException', (error) => {
            this.logger.warn({ err: error }, 'error while stopping, from a part left behind; going on');
          });
        }
        void this.onSignal(signal).then((code) => process.exit(code));
      });
    }
  }

  private async stopPart(part: Part): Promise<'stopped' | 'failed' | 'overran'> {
    let timer: NodeJS.Timeout | undefined;
    const overran = new Promise<'overran'>((resolve) => {
      timer = setTimeout(() => resolve('overran'), this.deadlineMs);
    });
    const closing = Promise.resolve()
      .then(() => part.close())
      .then(
        () => {
          this.logger.debug({ part: part.name }, 'closed');
          return 'stopped' as const;
        },
        (error: unknown) => {
          this.logger.error({ err: error, part: part.name }, `${part.name} failed to close cleanly`);
          return 'failed' as const;
        },
      );
    try {
      const result = await Promise.race([closing, overran]);
      if (result === 'overran') {
        let doing: string | undefined;
        try {
          doing = part.doing?.();
        } catch {
          doing = undefined; // a broken description must not stop the shutdown
        }
        this.logger.warn(
          { part: part.name, deadlineMs: this.deadlineMs, ...(doing === undefined ? {} : { doing }) },
          `${part.name} did not stop within ${this.deadlineMs / 1000} s; left behind (ISENTROPE_STOP_TIMEOUT sets the deadline)`,
        );
      }
      return result;
    } finally {
      clearTimeout(timer);
    }
  }
}
