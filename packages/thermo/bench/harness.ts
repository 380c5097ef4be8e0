/**
 * Shared by the thermo benchmarks: calls per CPU-second (CPU time, not wall time, since the
 * machine is shared and "one core" is what is asked) and one JSON line per figure.
 */

/** Runs f(i) for about `seconds` of CPU time after a warm-up; returns calls per CPU-second. */
export function rate(f: (i: number) => number, seconds = 2): number {
  let sink = 0;
  for (let i = 0; i < 20_000; i++) sink += f(i);
  let n = 0;
  const start = process.cpuUsage();
  let used = 0;
  while (used < seconds * 1e6) {
    for (let k = 0; k < 2_000; k++, n++) sink += f(n);
    const c = process.cpuUsage(start);
    used = c.user + c.system;
  }
  if (!Number.isFinite(sink)) throw new Error('bench produced a non-finite result');
  return n / (used / 1e6);
}

/** Prints one figure as a JSON line, to 3 significant digits. */
export function emit(bench: string, value: number, unit: string): void {
  process.stdout.write(`${JSON.stringify({ bench, value: Number(value.toPrecision(3)), unit })}\n`);
}
