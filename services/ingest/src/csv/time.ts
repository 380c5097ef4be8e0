/**
 * Timestamps of CSV files: the formats plants write, detected per file, and local times
 * turned into UTC instants in an IANA zone, including the daylight-saving hours.
 */
import { DateTime, IANAZone } from 'luxon';
import { IngestError } from '../errors.js';

/**
 * Built-in formats, by name. Any other string is taken as a luxon format
 * (https://moment.github.io/luxon/#/parsing?id=table-of-tokens).
 * - iso: ISO 8601, "2026-03-29T02:30:00", with or without fraction and offset ("Z", "+01:00")
 * - ymd: "2026-03-29 02:30:00" or "2026-03-29 02:30" (also with "/" between date parts)
 * - dmy: "29.03.2026 02:30" or "29.03.2026 02:30:00"
 * - mdy12: "03/29/2026 02:30:00 PM" (12-hour clock with AM/PM)
 * - mdy: "03/29/2026 14:30:00" (24-hour clock)
 * - epoch-s, epoch-ms: seconds or milliseconds since 1970-01-01T00:00:00Z
 */
export const BUILT_IN_TIME_FORMATS = ['iso', 'ymd', 'dmy', 'mdy12', 'mdy', 'epoch-s', 'epoch-ms'] as const;
export type BuiltInTimeFormat = (typeof BUILT_IN_TIME_FORMATS)[number];

/** A parsed timestamp before zone resolution: either an instant, or a local wall time. */
export type ParsedTime =
  | { readonly kind: 'instant'; readonly t: number }
  | { readonly kind: 'wall' /** Wall clock read as if UTC [ms]. */; readonly wall: number };

type Parser = (text: string) => ParsedTime | undefined;

function wallOf(
  y: number,
  mo: number,
  d: number,
  h: number,
  mi: number,
  s: number,
  ms: number,
): ParsedTime | undefined {
  if (mo < 1 || mo > 12 || d < 1 || d > 31 || h > 23 || mi > 59 || s > 59) return undefined;
  const wall = Date.UTC(y, mo - 1, d, h, mi, s, ms);
  // Rejects 31 April and 29 February of a common year (Date.UTC would roll them over).
  const check = new Date(wall);
  if (check.getUTCDate() !== d || check.getUTCMonth() !== mo - 1) return undefined;
  return { kind: 'wall', wall };
}

function fraction(text: string | undefined): number {
  if (text === undefined || text === '') return 0;
  return Math.round(Number(`0.${text}`) * 1000);
}

const ISO =
  /^(\d{4})-(\d{2})-(\d{2})[T ](\d{2}):(\d{2})(?::(\d{2})(?:[.,](\d{1,9}))?)?(Z|[+-]\d{2}(?::?\d{2})?)?$/;
const YMD = /^(\d{4})[-/](\d{2})[-/](\d{2}) (\d{1,2}):(\d{2})(?::(\d{2})(?:\.(\d{1,9}))?)?$/;
const DMY = /^(\d{1,2})\.(\d{1,2})\.(\d{4}) (\d{1,2}):(\d{2})(?::(\d{2})(?:\.(\d{1,9}))?)?$/;
const MDY12 = /^(\d{1,2})\/(\d{1,2})\/(\d{4}) (\d{1,2}):(\d{2})(?::(\d{2}))? ?([AaPp])[Mm]$/;
const MDY = /^(\d{1,2})\/(\d{1,2})\/(\d{4}) (\d{1,2}):(\d{2})(?::(\d{2})(?:\.(\d{1,9}))?)?$/;
const EPOCH = /^\d+(?:\.\d+)?$/;

const builtIn: Readonly<Record<BuiltInTimeFormat, Parser>> = {
  iso(text) {
    const m = ISO.exec(text);
    if (m === null) return undefined;
    const w = wallOf(+m[1]!, +m[2]!, +m[3]!, +m[4]!, +m[5]!, +(m[6] ?? 0), fraction(m[7]));
    if (w === undefined || w.kind !== 'wall') return undefined;
    const off = m[8];
    if (off === undefined) return w;
    if (off === 'Z') return { kind: 'instant', t: w.wall };
    const sign = off.startsWith('-') ? -1 : 1;
    const digits = off.slice(1).replace(':', '');
    const minutes = Number(digits.slice(0, 2)) * 60 + Number(digits.slice(2, 4) || '0');
    return { kind: 'instant', t: w.wall - sign * minutes * 60_000 };
  },
  ymd(text) {
    const m = YMD.exec(text);
    return m === null
      ? undefined
      : wallOf(+m[1]!, +m[2]!, +m[3]!, +m[4]!, +m[5]!, +(m[6] ?? 0), fraction(m[7]));
  },
  dmy(text) {
    const m = DMY.exec(text);
    return m === null
      ? undefined
      : wallOf(+m[3]!, +m[2]!, +m[1]!, +m[4]!, +m[5]!, +(m[6] ?? 0), fraction(m[7]));
  },
  mdy12(text) {
    const m = MDY12.exec(text);
    if (m === null) return undefined;
    const h12 = +m[4]!;
    if (h12 < 1 || h12 > 12) return undefined;
    // 12 AM is midnight, 12 PM is noon (common practice, no source).
    const h = (h12 % 12) + (m[7]!.toLowerCase() === 'p' ? 12 : 0);
    return wallOf(+m[3]!, +m[1]!, +m[2]!, h, +m[5]!, +(m[6] ?? 0), 0);
  },
  mdy(text) {
    const m = MDY.exec(text);
    return m === null
      ? undefined
      : wallOf(+m[3]!, +m[1]!, +m[2]!, +m[4]!, +m[5]!, +(m[6] ?? 0), fraction(m[7]));
  },
  'epoch-s'(text) {
    // 9 to 10 integer digits: 1973 to 2286; shorter numbers are not plausible plant times.
    if (!EPOCH.test(text)) return undefined;
    const int = text.split('.')[0]!;
    if (int.length < 9 || int.length > 10) return undefined;
    return { kind: 'instant', t: Math.round(Number(text) * 1000) };
  },
  'epoch-ms'(text) {
    if (!EPOCH.test(text)) return undefined;
    const int = text.split('.')[0]!;
    if (int.length < 12 || int.length > 13) return undefined;
    return { kind: 'instant', t: Math.round(Number(text)) };
  },
};

function luxonParser(format: string): Parser {
  const hasOffset = /Z/.test(format.replace(/'[^']*'/g, ''));
  return (text) => {
    const dt = DateTime.fromFormat(text, format, hasOffset ? { setZone: true } : { zone: 'UTC' });
    if (!dt.isValid) return undefined;
    return hasOffset ? { kind: 'instant', t: dt.toMillis() } : { kind: 'wall', wall: dt.toMillis() };
  };
}

export function timeParser(format: string): Parser {
  return (builtIn as Record<string, Parser | undefined>)[format] ?? luxonParser(format);
}

/** The first format of the list that reads this text, or undefined. */
export function detectTimeFormat(text: string, formats: readonly string[]): string | undefined {
  for (const f of formats) if (timeParser(f)(text) !== undefined) return f;
  return undefined;
}

/** A wall time in a zone: one instant, two (the repeated hour), or none (the skipped hour). */
export type LocalResolution =
  | { readonly kind: 'unique'; readonly t: number }
  | {
      readonly kind: 'ambiguous' /** Instant under the offset in force before the change. */;
      readonly earlier: number;
      readonly later: number;
    }
  | { readonly kind: 'gap' };

const BIN = 15 * 60_000;

/**
 * Resolves local wall times of one IANA zone. The offsets valid for a wall time are found
 * by testing the zone's offsets a day either side (no zone changes twice within a day),
 * cached per 15-minute bin, since zone transitions fall on quarter hours.
 */
export class ZoneResolver {
  private readonly zone: IANAZone;
  private readonly cache = new Map<number, readonly number[]>();

  constructor(readonly zoneName: string) {
    const zone = IANAZone.create(zoneName);
    if (!zone.isValid) {
      throw new IngestError(
        'INGEST_BAD_OPTIONS',
        `unknown time zone ${JSON.stringify(zoneName)}; use an IANA name such as "Europe/Berlin"`,
        { timeZone: zoneName },
      );
    }
    this.zone = zone;
  }

  /** Offsets [min] under which this wall time exists, sorted largest first (earliest instant first). */
  private offsets(wall: number): readonly number[] {
    const bin = Math.floor(wall / BIN);
    const hit = this.cache.get(bin);
    if (hit !== undefined) return hit;
    const candidates = new Set([
      this.zone.offset(wall - 86_400_000),
      this.zone.offset(wall + 86_400_000),
      this.zone.offset(wall),
    ]);
    const valid = [...candidates]
      .filter((o) => this.zone.offset(wall - o * 60_000) === o)
      .sort((a, b) => b - a);
    if (this.cache.size > 50_000) this.cache.clear();
    this.cache.set(bin, valid);
    return valid;
  }

  resolve(wall: number): LocalResolution {
    const offs = this.offsets(wall);
    if (offs.length === 0) return { kind: 'gap' };
    const first = wall - offs[0]! * 60_000;
    if (offs.length === 1) return { kind: 'unique', t: first };
    return { kind: 'ambiguous', earlier: first, later: wall - offs[offs.length - 1]! * 60_000 };
  }
}

/**
 * Resolves the repeated hour by order within one stream of rows (a wide file, or one tag
 * of a long file): the first pass takes the earlier offset; once the wall time goes
 * backwards inside the repeated hour, the later offset, until the wall time leaves it.
 */
export class FoldTracker {
  private prevWall: number | undefined;
  private second = false;

  /** Returns 'earlier' or 'later' for an ambiguous wall time; call note() for every other. */
  ambiguous(wall: number): 'earlier' | 'later' {
    if (this.prevWall !== undefined && wall < this.prevWall) this.second = true;
    this.prevWall = wall;
    return this.second ? 'later' : 'earlier';
  }

  note(wall: number): void {
    this.second = false;
    this.prevWall = wall;
  }
}
