/**
 * Mutated HTTP push bodies, each with its truth: the answer status it must get, the item
 * indexes it must reject, and the samples it must store once. Invented values.
 */
import { BAD_TAGS } from './plant.js';
import type { Random } from './random.js';

export type PushKind =
  | 'malformed JSON'
  | '50 MB body'
  | 'NaN literal'
  | 'not an array'
  | 'strings as values'
  | 'Infinity'
  | 'unknown tag'
  | 'far future time'
  | 'far past time'
  | 'duplicate items'
  | 'good batch';

export interface PushMutant {
  readonly kind: PushKind;
  readonly body: string | Buffer;
  /** 200 for a batch judged per item; else the body is refused whole (4xx) and nothing stored. */
  readonly status: 'per-item' | 'refused';
  readonly badIndexes: number[];
  readonly good: { tag: string; time: number; value: number }[];
  /** Items sent that name the same sample as an earlier one. */
  readonly duplicates: number;
}

const BASE = Date.UTC(2025, 7, 1);

function items(random: Random, index: number, n: number) {
  return Array.from({ length: n }, (_, i) => ({
    tag: BAD_TAGS[i % BAD_TAGS.length] ?? '',
    time: BASE + index * 100_000 + i * 10,
    value: random.value(),
  }));
}

/** A per-item batch where the items at some indexes are replaced by a bad form. */
function spoiled(
  random: Random,
  index: number,
  kind: PushKind,
  spoil: (it: { tag: string; time: number; value: number }) => string,
): PushMutant {
  const list = items(random, index, random.int(2, 40));
  const bad = new Set<number>([0, ...list.map((_, i) => i).filter(() => random.chance(0.3))]);
  const parts = list.map((it, i) =>
    bad.has(i) ? spoil(it) : JSON.stringify({ ...it, time: new Date(it.time).toISOString() }),
  );
  return {
    kind,
    body: `[${parts.join(',')}]`,
    status: 'per-item',
    badIndexes: [...bad].sort((a, b) => a - b),
    good: list.filter((_, i) => !bad.has(i)),
    duplicates: 0,
  };
}

const whole = (kind: PushKind, body: string | Buffer): PushMutant => ({
  kind,
  body,
  status: 'refused',
  badIndexes: [],
  good: [],
  duplicates: 0,
});

export function pushMutant(random: Random, index: number, allowHuge: boolean): PushMutant {
  const kinds: PushKind[] = [
    'malformed JSON',
    'NaN literal',
    'not an array',
    'strings as values',
    'Infinity',
    'unknown tag',
    'far future time',
    'far past time',
    'duplicate items',
    'good batch',
  ];
  if (allowHuge) kinds.push('50 MB body');
  const kind = random.pick(kinds);
  const iso = (t: number) => new Date(t).toISOString();
  switch (kind) {
    case 'malformed JSON': {
      const text = JSON.stringify(items(random, index, 5));
      return whole(kind, text.slice(0, random.int(1, text.length - 2)));
    }
    case '50 MB body':
      return whole(
        kind,
        Buffer.from(`[${'{"tag":"FB.BAD-1","time":"2025-08-01T00:00:00Z","value":1},'.repeat(850_000)}1]`),
      );
    case 'NaN literal':
      return whole(kind, `[{"tag":"${BAD_TAGS[0]}","time":"${iso(BASE)}","value":NaN}]`);
    case 'not an array':
      return whole(kind, JSON.stringify({ tag: BAD_TAGS[0], time: iso(BASE), value: 1 }));
    case 'strings as values':
      return spoiled(random, index, kind, (it) =>
        JSON.stringify({
          ...it,
          time: iso(it.time),
          value: random.pick(['12.5', 'NaN', 'Infinity', '', 'abc']),
        }),
      );
    case 'Infinity':
      return spoiled(
        random,
        index,
        kind,
        (it) => `{"tag":"${it.tag}","time":"${iso(it.time)}","value":${random.pick(['1e999', '-1e999'])}}`,
      );
    case 'unknown tag':
      return spoiled(random, index, kind, (it) =>
        JSON.stringify({ ...it, tag: `FB.NO-SUCH-${index}`, time: iso(it.time) }),
      );
    case 'far future time':
      return spoiled(random, index, kind, (it) =>
        JSON.stringify({
          ...it,
          time: random.pick(['9999-12-31T00:00:00Z', '2999-01-01T00:00:00Z', 8.64e15]),
        }),
      );
    case 'far past time':
      return spoiled(random, index, kind, (it) =>
        JSON.stringify({ ...it, time: random.pick(['0001-01-01T00:00:00Z', '1000-06-01T00:00:00Z']) }),
      );
    case 'duplicate items': {
      const list = items(random, index, random.int(1, 20));
      const twice = [...list, ...list.slice(0, random.int(1, list.length))];
      return {
        kind,
        body: JSON.stringify(twice.map((it) => ({ ...it, time: iso(it.time) }))),
        status: 'per-item',
        badIndexes: [],
        good: list,
        duplicates: twice.length - list.length,
      };
    }
    default: {
      const list = items(random, index, random.int(1, 50));
      return {
        kind,
        body: JSON.stringify(list.map((it) => ({ ...it, time: iso(it.time) }))),
        status: 'per-item',
        badIndexes: [],
        good: list,
        duplicates: 0,
      };
    }
  }
}
