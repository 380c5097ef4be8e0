/** Mutated push bodies against the running process, each answer and stored sample checked. */
import { storedSamples } from './compare.js';
import { BAD_TAGS } from './plant.js';
import { type PushKind, type PushMutant, pushMutant } from './push-mutants.js';
import type { Random } from './random.js';
import { PUSH_TOKEN, type World } from './world.js';

export interface PushKindCount {
  bodies: number;
  wrongStatus: number;
  /** Status answers seen, e.g. "200: 12, 503: 3". */
  statuses: Map<number, number>;
  rejectedWrong: number;
  goodItems: number;
  missing: number;
  altered: number;
  acceptedOvercount: number;
  hangs: number;
}

const zero = (): PushKindCount => ({
  bodies: 0,
  wrongStatus: 0,
  statuses: new Map(),
  rejectedWrong: 0,
  goodItems: 0,
  missing: 0,
  altered: 0,
  acceptedOvercount: 0,
  hangs: 0,
});

async function send(
  world: World,
  m: PushMutant,
): Promise<{ status: number; answer: { accepted?: number; rejected?: { index: number }[] } }> {
  try {
    const r = await fetch(`${world.app.baseUrl}/api/ingest/samples`, {
      method: 'POST',
      headers: { authorization: `Bearer ${PUSH_TOKEN}`, 'content-type': 'application/json' },
      body: m.body,
      signal: AbortSignal.timeout(30_000),
    });
    const answer = (await r.json().catch(() => ({}))) as {
      accepted?: number;
      rejected?: { index: number }[];
    };
    return { status: r.status, answer };
  } catch (error) {
    return { status: error instanceof Error && error.name === 'TimeoutError' ? -1 : 0, answer: {} };
  }
}

export async function runBadPush(
  world: World,
  random: Random,
  count: number,
): Promise<{ byKind: Map<PushKind, PushKindCount>; crashes: number }> {
  const byKind = new Map<PushKind, PushKindCount>();
  const sent: PushMutant[] = [];
  let crashes = 0;
  for (let i = 0; i < count; i++) {
    const m = pushMutant(random, i, i % 100 === 3);
    sent.push(m);
    const k = byKind.get(m.kind) ?? zero();
    byKind.set(m.kind, k);
    k.bodies++;
    const { status, answer } = await send(world, m);
    k.statuses.set(status, (k.statuses.get(status) ?? 0) + 1);
    if (status === -1) k.hangs++;
    if (!world.app.alive) {
      crashes++;
      await world.app.startUntilHealthy();
    }
    // A body over the limit may be cut off before the client reads the 413 (a reset): refused all the same, if the process lives.
    const cutOff = m.kind === '50 MB body' && status === 0 && world.app.alive;
    const okStatus = m.status === 'per-item' ? status === 200 : cutOff || (status >= 400 && status < 500);
    if (!okStatus) k.wrongStatus++;
    if (status === 200) {
      const got = (answer.rejected ?? []).map((r) => r.index);
      const uniq = [...new Set(got)].sort((a, b) => a - b);
      if (uniq.join(',') !== m.badIndexes.join(',')) k.rejectedWrong++;
      if ((answer.accepted ?? 0) > m.good.length) k.acceptedOvercount++;
    }
  }
  const { rows } = await storedSamples(world.pool, [...BAD_TAGS]);
  const stored = new Map(rows.map((r) => [`${r.tag}|${r.time}`, r.value]));
  for (const m of sent) {
    const k = byKind.get(m.kind) ?? zero();
    for (const g of m.good) {
      k.goodItems++;
      const v = stored.get(`${g.tag}|${g.time}`);
      if (v === undefined) k.missing++;
      else if (v !== g.value) k.altered++;
    }
  }
  return { byKind, crashes };
}
