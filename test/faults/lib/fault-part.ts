/** Part 1: the fault run, its check and its table. */
import { checkFaultRun, waitQuiet } from './fault-check.js';
import { type Fault, type FaultKind, type FaultPlan, runFaultLanes } from './faults.js';
import type { Random } from './random.js';
import { table, type Verdict } from './report.js';
import type { SentValue } from './sent.js';
import type { World } from './world.js';

const SECOND = 1000;

/** Missing values grouped by the faults active within 2 s before to 20 s after them, with the run's start as 0. */
function explainMissing(missing: readonly SentValue[], faults: readonly Fault[]): string {
  const groups = new Map<string, number>();
  for (const v of missing) {
    const near = faults
      .filter(
        (f) =>
          v.time >= f.start - 2000 && v.time <= (f.end === 0 ? Number.POSITIVE_INFINITY : f.end) + 20_000,
      )
      .map((f) => `${f.kind}${f.note === undefined ? '' : ` (${f.note})`}`);
    const key = near.length === 0 ? 'no fault near' : [...new Set(near)].join(' + ');
    groups.set(key, (groups.get(key) ?? 0) + 1);
  }
  return [...groups].map(([k, n]) => `${n} near ${k}`).join('; ');
}

export function faultPlan(short: boolean): FaultPlan {
  return short
    ? {
        kills: 3,
        dbStops: 3,
        uaCuts: 2,
        readOnly: 2,
        dbOutageMs: [1 * SECOND, 4 * SECOND],
        uaOutageMs: [1 * SECOND, 3 * SECOND],
        readOnlyMs: [1 * SECOND, 4 * SECOND],
        gapMs: [300, 1500],
      }
    : {
        kills: 40,
        dbStops: 12,
        uaCuts: 26,
        readOnly: 22,
        dbOutageMs: [5 * SECOND, 120 * SECOND],
        uaOutageMs: [2 * SECOND, 20 * SECOND],
        readOnlyMs: [3 * SECOND, 25 * SECOND],
        gapMs: [2 * SECOND, 8 * SECOND],
      };
}

export async function faultPart(
  world: World,
  random: Random,
  short: boolean,
  say: (l: string) => void,
): Promise<{ verdicts: Verdict[]; figures: Record<string, number> }> {
  const plan = faultPlan(short);
  say(
    `faults: ${plan.kills} kills, ${plan.dbStops} database stops, ${plan.uaCuts} OPC UA cuts, ${plan.readOnly} read-only buffers`,
  );
  const run = await runFaultLanes(world, random, plan, say, short ? 45_000 : 1_800_000);
  const quiet = await waitQuiet(world, short ? 60_000 : 300_000);
  const { routes, note } = await checkFaultRun(world, run.faults);
  const kinds = new Map<FaultKind, number>();
  for (const f of run.faults) kinds.set(f.kind, (kinds.get(f.kind) ?? 0) + 1);
  say('\nFaults injected, by kind');
  say(table(['kind', 'count'], [...[...kinds].sort(), ['total', run.faults.length]]));
  say('\nSent and stored, by route');
  const rows = routes.map((r) => [
    r.route,
    r.result.sent,
    r.result.stored,
    r.result.missing.length,
    r.result.doubled,
    r.result.altered.length,
    r.result.extra.length,
    r.unreceivable,
  ]);
  const sum = (i: number) => rows.reduce((a, r) => (r[0] === 'all' ? a : a + Number(r[i])), 0);
  rows.push(['all', sum(1), sum(2), sum(3), sum(4), sum(5), sum(6), sum(7)]);
  say(
    table(
      ['route', 'sent', 'stored', 'missing', 'doubled', 'altered', 'extra', 'OPC UA unreceivable (excused)'],
      rows,
    ),
  );
  if (note !== undefined) say(`note: ${note}`);
  const statuses = [...run.findings.pushStatus]
    .map(([s, n]) => `${s === 0 ? 'no answer' : s}: ${n}`)
    .join(', ');
  say(
    `push: ${run.pushBatches} batches, answers other than 200: ${statuses === '' ? 'none' : statuses}; items rejected in a 200: ${run.findings.pushRejected}; batches given up: ${run.findings.pushGivenUp}`,
  );
  const example = routes.flatMap((r) => [
    ...r.result.missing.slice(0, 2),
    ...r.result.altered.slice(0, 2).map((a) => a.sent),
  ]);
  if (example.length > 0) say(`examples: ${JSON.stringify(example.slice(0, 6))}`);
  for (const r of routes) {
    const around = explainMissing(r.result.missing, run.faults);
    if (around !== '') say(`${r.route} missing values, by the faults around them: ${around}`);
  }
  const target = short ? 10 : 100;
  const verdicts: Verdict[] = [
    {
      part: 'faults',
      target: `${target} faults injected`,
      ok: run.faults.length >= target,
      detail: `${run.faults.length}`,
    },
    { part: 'faults', target: '0 lost', ok: sum(3) === 0, detail: `${sum(3)} missing of ${sum(1)} sent` },
    { part: 'faults', target: '0 doubled', ok: sum(4) === 0, detail: `${sum(4)}` },
    {
      part: 'faults',
      target: '0 altered or extra',
      ok: sum(5) + sum(6) === 0,
      detail: `${sum(5)} altered, ${sum(6)} extra`,
    },
    {
      part: 'faults',
      target: 'everything taken in before the check',
      ok: quiet,
      detail: quiet ? 'drop folder empty, buffer drained' : 'files or buffer left after the wait',
    },
    {
      part: 'faults',
      target: 'push: no item rejected, no batch given up',
      ok: run.findings.pushRejected + run.findings.pushGivenUp === 0,
      detail: `${run.findings.pushRejected} rejected, ${run.findings.pushGivenUp} given up`,
    },
  ];
  return {
    verdicts,
    figures: {
      faults: run.faults.length,
      sent: sum(1),
      stored: sum(2),
      missing: sum(3),
      doubled: sum(4),
      altered: sum(5),
      extra: sum(6),
    },
  };
}
