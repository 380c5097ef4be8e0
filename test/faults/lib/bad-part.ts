/** Part 2: bad CSV files and push bodies through the running process; tables and verdicts. */
import { checkCsv, feedCsv, slowestFile } from './bad-csv.js';
import { runBadPush } from './bad-push.js';
import type { MutationKind } from './csv-mutants.js';
import type { Random } from './random.js';
import { table, type Verdict } from './report.js';
import type { World } from './world.js';

/**
 * Still failing, reported to the lead: after the settling time (300 s) a file is taken as complete,
 * so a cut last line that still parses ("90" of "90.4") is stored short (issue 18 #13 says never).
 */
const KNOWN_CSV: Partial<Record<MutationKind, string>> = {
  truncated: 'issue 18 #13, a settled file: its cut last line is stored',
};

export async function badPart(
  world: World,
  random: Random,
  short: boolean,
  say: (l: string) => void,
): Promise<{ verdicts: Verdict[]; figures: Record<string, number> }> {
  const count = short ? 500 : 10_000;
  say(`\nbad input: ${count} mutated CSV files through the running process`);
  const fed = await feedCsv(world, random, count, say);
  const byKind = await checkCsv(world, fed.files);
  const slowest = await slowestFile(world);
  say(
    `\nMutated CSV files, by kind (${fed.files.length} files in ${Math.round(fed.seconds)} s; slowest file ${slowest.toFixed(1)} s)`,
  );
  const rows = [...byKind]
    .sort()
    .map(([kind, k]) => [
      kind,
      k.files,
      k.goodCells,
      k.missing,
      k.altered,
      k.storedFromBad,
      k.badLines,
      k.unreported,
      k.refusedUnreported,
      k.hangs,
    ]);
  say(
    table(
      [
        'kind',
        'files',
        'good cells',
        'missing',
        'altered',
        'stored from bad rows',
        'bad lines',
        'unreported',
        'refused unreported',
        'hangs',
      ],
      rows,
    ),
  );
  const pushCount = short ? 60 : 1000;
  const push = await runBadPush(world, random, pushCount);
  say(`\nMutated push bodies, by kind (${pushCount} bodies)`);
  say(
    table(
      [
        'kind',
        'bodies',
        'statuses',
        'wrong status',
        'rejections wrong',
        'accepted overcount',
        'good items',
        'missing',
        'altered',
        'hangs',
      ],
      [...push.byKind]
        .sort()
        .map(([kind, k]) => [
          kind,
          k.bodies,
          [...k.statuses].map(([s, n]) => `${s}: ${n}`).join(' '),
          k.wrongStatus,
          k.rejectedWrong,
          k.acceptedOvercount,
          k.goodItems,
          k.missing,
          k.altered,
          k.hangs,
        ]),
    ),
  );
  const verdicts: Verdict[] = [];
  const crashes = fed.crashes + push.crashes;
  const hangs =
    [...byKind.values()].reduce((a, k) => a + k.hangs, 0) +
    [...push.byKind.values()].reduce((a, k) => a + k.hangs, 0);
  verdicts.push({
    part: 'bad input',
    target: `at least ${count} files tried`,
    ok: fed.files.length >= count,
    detail: `${fed.files.length}`,
  });
  verdicts.push({ part: 'bad input', target: 'no crash', ok: crashes === 0, detail: `${crashes}` });
  verdicts.push({
    part: 'bad input',
    target: 'no hang over 30 s',
    ok: hangs === 0 && fed.leftInFolder === 0,
    detail: `${hangs} hangs, ${fed.leftInFolder} files never taken`,
  });
  for (const [kind, k] of byKind) {
    if (k.missing + k.altered + k.storedFromBad > 0)
      verdicts.push({
        part: 'bad input',
        target: `CSV ${kind}: every good row stored exactly once, no bad row stored`,
        ok: false,
        detail: `${k.missing} missing, ${k.altered} altered, ${k.storedFromBad} stored from bad rows`,
        known: KNOWN_CSV[kind],
      });
    if (k.unreported + k.refusedUnreported > 0)
      verdicts.push({
        part: 'bad input',
        target: `CSV ${kind}: every bad row reported with file, line and reason`,
        ok: false,
        detail: `${k.unreported} of ${k.badLines} bad lines unreported, ${k.refusedUnreported} refused files unreported`,
        known: KNOWN_CSV[kind],
      });
  }
  for (const [kind, k] of push.byKind) {
    if (k.wrongStatus + k.rejectedWrong + k.missing + k.altered + k.acceptedOvercount > 0)
      verdicts.push({
        part: 'bad input',
        target: `push ${kind}: bad items rejected per item, good ones stored once, honest count`,
        ok: false,
        detail: `${k.wrongStatus} wrong status, ${k.rejectedWrong} wrong rejections, ${k.missing} good items missing, ${k.altered} altered, ${k.acceptedOvercount} overcounted`,
      });
  }
  if (verdicts.every((v) => v.ok))
    verdicts.push({
      part: 'bad input',
      target: 'every good row stored once, every bad row reported',
      ok: true,
      detail: 'all kinds',
    });
  return {
    verdicts,
    figures: {
      files: fed.files.length,
      seconds: Math.round(fed.seconds),
      crashes,
      hangs,
      pushBodies: pushCount,
    },
  };
}
