/**
 * A seeded generator of mutated CSV files for the bad-input part. Each file comes with its
 * truth: the cells that must be stored (tag, UTC time, value) and the lines that must be
 * reported in quarantine. Mutations whose outcome depends on reading choices the README
 * leaves open are built so the outcome is fixed: a flipped byte becomes a letter in a
 * number or a timestamp, never a digit. Invented values.
 */
import { BAD_TAGS } from './plant.js';
import type { Random } from './random.js';

export type MutationKind =
  | 'clean'
  | 'byte flip in value'
  | 'byte flip in time'
  | 'truncated'
  | 'huge field'
  | 'wrong delimiter'
  | 'mixed delimiters'
  | 'BOM'
  | 'CRLF'
  | 'CR only'
  | 'mixed line ends'
  | 'binary junk line'
  | 'binary file'
  | 'empty'
  | '10 MB single line'
  | 'header only'
  | 'duplicate column'
  | 'unknown column'
  | 'decimal comma'
  | 'impossible date'
  | 'repeated DST hour';

export interface Cell {
  readonly tag: string;
  readonly time: number;
  readonly value: number;
}

export interface MutantFile {
  readonly name: string;
  readonly kind: MutationKind;
  readonly bytes: Buffer;
  /** Cells that must be stored exactly once, with this value. */
  readonly good: Cell[];
  /** 1-based lines that must have a quarantine entry (line 1: the header). */
  readonly badLines: number[];
  /** The whole file must be refused with a reason (no line can be judged). */
  readonly refusedWhole: boolean;
}

const HEADER = ['timestamp', ...BAD_TAGS];
/** Files of the bad-input part live in 2025, 1000 s apart, so no two files share a time. */
const BASE = Date.UTC(2025, 0, 1);

interface Row {
  time: number;
  values: number[];
}

function rows(random: Random, index: number, n: number): Row[] {
  return Array.from({ length: n }, (_, r) => ({
    time: BASE + index * 1_000_000 + r * 1000,
    values: BAD_TAGS.map(() => random.value()),
  }));
}

const iso = (ms: number) => new Date(ms).toISOString();
const line = (row: Row) => [iso(row.time), ...row.values.map(String)].join(',');
const cellsOf = (row: Row, skip: ReadonlySet<number> = new Set()) =>
  row.values.flatMap((value, i) => (skip.has(i) ? [] : [{ tag: BAD_TAGS[i] ?? '', time: row.time, value }]));

function replaceAt(text: string, at: number, ch: string): string {
  return text.slice(0, at) + ch + text.slice(at + 1);
}

interface Built {
  lines: string[];
  good: Cell[];
  badLines: number[];
  refusedWhole?: boolean;
  eol?: string;
  prefix?: Buffer;
  raw?: Buffer;
}

type Builder = (random: Random, index: number) => Built;

function plain(random: Random, index: number, eolFor: (r: Random) => string): Built {
  const rs = rows(random, index, random.int(1, 30));
  return {
    lines: [HEADER.join(','), ...rs.map(line)],
    good: rs.flatMap((r) => cellsOf(r)),
    badLines: [],
    eol: eolFor(random),
  };
}

/** Rows where some lines are replaced by a bad form of themselves. */
function withBadRows(
  random: Random,
  index: number,
  spoil: (row: Row, r: Random) => { text: string; keep: Set<number> | 'none' },
): Built {
  const rs = rows(random, index, random.int(2, 30));
  const lines = [HEADER.join(',')];
  const good: Cell[] = [];
  const badLines: number[] = [];
  rs.forEach((row, i) => {
    if (random.chance(0.3) || i === 0) {
      const s = spoil(row, random);
      lines.push(s.text);
      badLines.push(i + 2);
      if (s.keep !== 'none') good.push(...cellsOf(row, s.keep));
    } else {
      lines.push(line(row));
      good.push(...cellsOf(row));
    }
  });
  return { lines, good, badLines };
}

const LETTERS = 'xQ#!zk';

const BUILDERS: Record<MutationKind, Builder> = {
  clean: (r, i) => plain(r, i, () => '\n'),
  BOM: (r, i) => ({ ...plain(r, i, () => '\n'), prefix: Buffer.from([0xef, 0xbb, 0xbf]) }),
  CRLF: (r, i) => plain(r, i, () => '\r\n'),
  'CR only': (r, i) => plain(r, i, () => '\r'),
  'mixed line ends': (r, i) => plain(r, i, () => 'mixed'),
  'byte flip in value': (r, i) =>
    withBadRows(r, i, (row, rr) => {
      const col = rr.int(0, row.values.length - 1);
      const cells = row.values.map(String);
      const text = cells[col] ?? '0';
      cells[col] = replaceAt(text, rr.int(0, text.length - 1), rr.pick([...LETTERS]));
      return { text: [iso(row.time), ...cells].join(','), keep: new Set([col]) };
    }),
  'byte flip in time': (r, i) =>
    withBadRows(r, i, (row, rr) => {
      const t = iso(row.time);
      // Within the date and clock digits (0..18), a letter makes it no timestamp at all.
      const at = rr.pick([0, 1, 2, 3, 5, 6, 8, 9, 11, 12, 14, 15, 17, 18]);
      return {
        text: [replaceAt(t, at, rr.pick([...LETTERS])), ...row.values.map(String)].join(','),
        keep: 'none',
      };
    }),
  'huge field': (r, i) =>
    withBadRows(r, i, (row, rr) => ({
      text: ['x'.repeat(rr.int(20_000, 200_000)), ...row.values.map(String)].join(','),
      keep: 'none',
    })),
  'mixed delimiters': (r, i) =>
    withBadRows(r, i, (row) => ({
      text: [iso(row.time), ...row.values.map(String)].join(';'),
      keep: 'none',
    })),
  'decimal comma': (r, i) =>
    withBadRows(r, i, (row) => ({
      text: [
        iso(row.time),
        ...row.values.map((v) => (Number.isInteger(v) ? `${v},5` : String(v).replace('.', ','))),
      ].join(','),
      keep: 'none',
    })),
  'impossible date': (r, i) =>
    withBadRows(r, i, (row, rr) => {
      const t = iso(row.time);
      const bad = rr.pick(['2025-02-30', '2025-13-01', '2025-00-10', '2025-04-31']) + t.slice(10);
      return {
        text: [rr.chance(0.5) ? bad : `${t.slice(0, 11)}25${t.slice(13)}`, ...row.values.map(String)].join(
          ',',
        ),
        keep: 'none',
      };
    }),
  'binary junk line': (r, i) =>
    withBadRows(r, i, (_row, rr) => {
      const bytes = Array.from({ length: rr.int(5, 200) }, () => {
        let b = rr.int(0, 255);
        if (b === 10 || b === 13) b = 0xff;
        return b;
      });
      bytes[0] = 0xff; // never valid UTF-8
      return { text: Buffer.from(bytes).toString('latin1'), keep: 'none' };
    }),
  truncated: (r, i) => {
    const b = plain(r, i, () => '\n');
    const last = b.lines.length - 1;
    if (last < 1) return b;
    const text = b.lines[last] ?? '';
    // Cut inside the last field, or anywhere within the line, never at its end.
    const cut = r.int(1, text.length - 1);
    b.lines[last] = text.slice(0, cut);
    const cutRow = b.good.filter((c) => c.time === BASE + i * 1_000_000 + (last - 1) * 1000);
    return {
      lines: b.lines,
      good: b.good.filter((c) => !cutRow.includes(c)),
      badLines: [last + 1],
      eol: 'none-at-end',
    };
  },
  'wrong delimiter': (r, i) => {
    const b = plain(r, i, () => '\n');
    return { lines: b.lines.map((l) => l.replaceAll(',', ';')), good: [], badLines: [], refusedWhole: true };
  },
  'binary file': (r) => ({
    lines: [],
    good: [],
    badLines: [],
    refusedWhole: true,
    raw: Buffer.from(Array.from({ length: r.int(10, 5000) }, (_, k) => (k === 0 ? 0xff : r.int(0, 255)))),
  }),
  empty: () => ({ lines: [], good: [], badLines: [], refusedWhole: true, raw: Buffer.alloc(0) }),
  '10 MB single line': (r) => ({
    lines: [],
    good: [],
    badLines: [],
    refusedWhole: true,
    raw: Buffer.from(`timestamp,${'9'.repeat(10 * 1024 * 1024 + r.int(0, 1000))}`),
  }),
  'header only': (r, i) => ({
    lines: [`${HEADER.join(',')}${','.repeat(i % 50 === 0 ? 0 : 0)}`],
    good: [],
    badLines: [],
    eol: r.pick(['\n', '']) === '' ? 'none-at-end' : '\n',
  }),
  'duplicate column': (r, i) => {
    const rs = rows(r, i, r.int(1, 20));
    const lines = [[...HEADER, BAD_TAGS[0]].join(','), ...rs.map((row) => `${line(row)},${r.value()}`)];
    return { lines, good: rs.flatMap((row) => cellsOf(row)), badLines: [1] };
  },
  'unknown column': (r, i) => {
    const rs = rows(r, i, r.int(1, 20));
    const lines = [[...HEADER, `FB.UNKNOWN-${i}`].join(','), ...rs.map((row) => `${line(row)},${r.value()}`)];
    return { lines, good: rs.flatMap((row) => cellsOf(row)), badLines: [1] };
  },
  'repeated DST hour': (r, i) => {
    // Europe/Berlin on the last Sunday of October: 02:00-02:59 local happens twice (CEST, then
    // CET). Two rows in the first pass, then the same wall times again: by row order (the
    // README's default), the second pass is the later hour. Each file its own year, minutes and second.
    const year = 2025 - Math.floor(i / 1200);
    const day = lastSundayOfOctober(year);
    const m1 = Math.floor((i % 1200) / 60) % 20;
    const m2 = m1 + 30;
    const ss = i % 60;
    const two = (n: number) => String(n).padStart(2, '0');
    const walls = [m1, m2, m1, m2].map((m) => `${year}-10-${two(day)} 02:${two(m)}:${two(ss)}`);
    // 02:mm CEST is 00:mm UTC; 02:mm CET is 01:mm UTC.
    const utc = [m1, m2].map((m) => Date.UTC(year, 9, day, 0, m, ss));
    const times = [utc[0] ?? 0, utc[1] ?? 0, (utc[0] ?? 0) + 3_600_000, (utc[1] ?? 0) + 3_600_000];
    const tag = BAD_TAGS[0] ?? '';
    const values = times.map(() => r.value());
    return {
      lines: [`timestamp,${tag}`, ...walls.map((w, k) => `${w},${values[k]}`)],
      good: times.map((time, k) => ({ tag, time, value: values[k] ?? 0 })),
      badLines: [],
    };
  },
};

function lastSundayOfOctober(year: number): number {
  const last = new Date(Date.UTC(year, 9, 31));
  return 31 - last.getUTCDay();
}

export const MUTATION_KINDS = Object.keys(BUILDERS) as MutationKind[];

function join(lines: readonly string[], eol: string, random: Random): string {
  if (eol === 'mixed') return lines.map((l) => l + random.pick(['\n', '\r\n'])).join('');
  if (eol === 'none-at-end') return lines.join('\n');
  return lines.map((l) => l + eol).join('');
}

/** File number `index` of a run: its kind drawn from the seed (10 MB lines kept rare). */
export function mutant(random: Random, index: number): MutantFile {
  let kind = random.pick(MUTATION_KINDS);
  if (kind === '10 MB single line' && index % 500 !== 7) kind = 'clean';
  const b = BUILDERS[kind](random, index);
  const body = b.raw ?? Buffer.from(join(b.lines, b.eol ?? '\n', random), 'latin1');
  const bytes = b.prefix === undefined ? body : Buffer.concat([b.prefix, body]);
  return {
    name: `bad-${String(index).padStart(5, '0')}.csv`,
    kind,
    bytes,
    good: b.good,
    badLines: b.badLines,
    refusedWhole: b.refusedWhole ?? false,
  };
}
