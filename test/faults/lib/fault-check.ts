/**
 * After the fault run: wait until Isentrope has taken in everything (drop folder empty,
 * buffer drained, stored count still), then compare sent with stored per route.
 */
import { type Comparison, compare, storedSamples, via } from './compare.js';
import type { Fault } from './faults.js';
import { sleep } from './random.js';
import type { SentValue } from './sent.js';
import { ALL_FAULT_TAGS, bufferedBytes, type World, waitingFiles } from './world.js';

export interface RouteCount {
  readonly route: string;
  readonly result: Comparison;
  /** OPC UA values published while no subscription could receive them (excused, counted apart). */
  readonly unreceivable: number;
}

export async function waitQuiet(world: World, ms: number): Promise<boolean> {
  const deadline = Date.now() + ms;
  let last = -1;
  let still = 0;
  while (Date.now() < deadline) {
    const files = await waitingFiles(world.csvFolder);
    const buffered = await bufferedBytes(world.bufferDir);
    const n = await world.pool
      .query<{ n: string }>('SELECT count(*)::text AS n FROM samples')
      .then((r) => Number(r.rows[0]?.n ?? 0))
      .catch(() => -1);
    still = files === 0 && buffered === 0 && n === last ? still + 1 : 0;
    if (still >= 5) return true;
    last = n;
    await sleep(1000);
  }
  return false;
}

/**
 * OPC UA pushes the present value to a live subscription only: a value set while no live client
 * had monitored items (Isentrope down, restarting, not yet subscribed again, the server cut off)
 * reaches no one, and the suite's server notes that per value (`listened`). Such values are
 * counted as unreceivable, not lost; so are values set within 2 s of a kill or cut (received,
 * perhaps, but not yet written when the process died). Every other OPC UA value must be stored.
 * (A fixed allowance after each restart, 20 s before, counted values as lost when a loaded
 * machine took longer to subscribe again: finding F4.)
 */
function receivable(value: SentValue, faults: readonly Fault[]): boolean {
  if (value.listened !== true) return false;
  return !faults.some(
    (f) =>
      (f.kind.startsWith('kill') || f.kind === 'OPC UA cut') &&
      value.time >= f.start - 2000 &&
      value.time <= f.start + 2000,
  );
}

export async function checkFaultRun(
  world: World,
  faults: readonly Fault[],
): Promise<{ routes: RouteCount[]; note: string | undefined }> {
  const { rows, note } = await storedSamples(world.pool, ALL_FAULT_TAGS);
  const routes: RouteCount[] = [];
  for (const route of ['csv', 'push', 'opcua'] as const) {
    const sentAll = via(world.sent.values, route);
    const tags = new Set(sentAll.map((v) => v.tag));
    const stored = rows.filter((r) => tags.has(r.tag));
    const result = compare(sentAll, stored);
    let unreceivable = 0;
    if (route === 'opcua') {
      const lost = result.missing.filter((v) => receivable(v, faults));
      unreceivable = result.missing.length - lost.length;
      result.missing = lost;
      // Values first published before the subscription existed are not "extra".
    }
    routes.push({ route, result, unreceivable });
  }
  return { routes, note };
}
