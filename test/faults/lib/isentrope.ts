/**
 * A real Isentrope process (`isentrope start`, services/cli) in its own process group, its
 * output appended to a log file; SIGKILL reaches the whole group.
 */
import { type ChildProcess, spawn } from 'node:child_process';
import { createWriteStream, type WriteStream } from 'node:fs';
import { sleep } from './random.js';

const CLI = new URL('../../../services/cli/bin/isentrope.js', import.meta.url).pathname;

export interface IsentropeOptions {
  readonly env: Readonly<Record<string, string>>;
  readonly logFile: string;
  readonly port: number;
  /** Run as this user (when the suite runs as root, so a read-only folder binds the process too). */
  readonly user?: { readonly uid: number; readonly gid: number } | undefined;
}

/** Runs one CLI command to its end, with stdin text; bounded in time. */
export function runCli(
  args: readonly string[],
  env: Readonly<Record<string, string>>,
  stdin = '',
  timeoutMs = 120_000,
): Promise<{ code: number | null; output: string }> {
  return new Promise((resolve) => {
    const child = spawn(process.execPath, [CLI, ...args], {
      env: { ...baseEnv(), ...env },
      stdio: ['pipe', 'pipe', 'pipe'],
      detached: true,
    });
    let output = '';
    child.stdout.on('data', (c: Buffer) => (output += c.toString()));
    child.stderr.on('data', (c: Buffer) => (output += c.toString()));
    const timer = setTimeout(() => killGroup(child), timeoutMs);
    child.on('exit', (code) => {
      clearTimeout(timer);
      resolve({ code, output });
    });
    child.stdin.end(stdin);
  });
}

function baseEnv(): Record<string, string> {
  const { DATABASE_URL: _a, TEST_DATABASE_URL: _b, ...parent } = process.env;
  return Object.fromEntries(Object.entries(parent).filter((e): e is [string, string] => e[1] !== undefined));
}

export function killGroup(child: ChildProcess, signal: NodeJS.Signals = 'SIGKILL'): void {
  if (child.pid === undefined || child.exitCode !== null || child.signalCode !== null) return;
  try {
    process.kill(-child.pid, signal);
  } catch {
    // already gone
  }
}

export class IsentropeProcess {
  private child: ChildProcess | undefined;
  private log: WriteStream;
  starts = 0;

  constructor(readonly options: IsentropeOptions) {
    this.log = createWriteStream(options.logFile, { flags: 'a' });
  }

  get baseUrl(): string {
    return `http://127.0.0.1:${this.options.port}`;
  }

  get alive(): boolean {
    return this.child !== undefined && this.child.exitCode === null && this.child.signalCode === null;
  }

  spawn(): void {
    this.starts++;
    this.log.write(`\n===== start ${this.starts} at ${new Date().toISOString()}\n`);
    const child = spawn(process.execPath, [CLI, 'start'], {
      env: { ...baseEnv(), LOG_FORMAT: 'json', ...this.options.env, PORT: String(this.options.port) },
      stdio: ['ignore', 'pipe', 'pipe'],
      detached: true,
      ...(this.options.user ?? {}),
    });
    child.stdout?.pipe(this.log, { end: false });
    child.stderr?.pipe(this.log, { end: false });
    this.child = child;
  }

  /** Starts (again, after an early exit, as a service manager would) until /api/health answers. */
  async startUntilHealthy(deadlineMs = 180_000): Promise<void> {
    const deadline = Date.now() + deadlineMs;
    while (Date.now() < deadline) {
      if (!this.alive) this.spawn();
      if (await this.healthy()) return;
      await sleep(300);
    }
    throw new Error(
      `isentrope did not answer /api/health within ${deadlineMs / 1000} s (see ${this.options.logFile})`,
    );
  }

  async healthy(): Promise<boolean> {
    try {
      const r = await fetch(`${this.baseUrl}/api/health`, { signal: AbortSignal.timeout(2000) });
      await r.arrayBuffer();
      return r.status < 500 || r.status === 503;
    } catch {
      return false;
    }
  }

  /** SIGKILL to the whole process group; resolves once it has exited. */
  async kill(): Promise<void> {
    const child = this.child;
    if (child === undefined || !this.alive) return;
    const exited = new Promise<void>((resolve) => child.once('exit', () => resolve()));
    killGroup(child);
    await Promise.race([exited, sleep(10_000)]);
  }

  /** SIGTERM and wait (bounded), then SIGKILL. */
  async stop(): Promise<void> {
    const child = this.child;
    if (child === undefined || !this.alive) return;
    const exited = new Promise<void>((resolve) => child.once('exit', () => resolve()));
    killGroup(child, 'SIGTERM');
    await Promise.race([exited, sleep(20_000)]);
    await this.kill();
  }

  close(): void {
    this.log.end();
  }
}
