/**
 * Calendar months and days in a site's local time (an IANA time zone), as UTC instants [ms].
 * Plants plan in local time: at a Berlin site "March 2026" runs from local midnight on 1 March to
 * local midnight on 1 April, and the day the clocks change has 23 or 25 hours.
 *
 * Offsets come from the IANA time-zone database the runtime carries (Intl, ICU). A day starts at
 * local midnight; where the clocks jump over midnight (some zones change at 00:00), it starts at
 * the jump, the first instant of that local date. Assumed: a zone changes its offset at most once
 * within a day either side of a midnight (true of every zone in the database for modern dates,
 * common practice, no source); the ingest service's zone resolver assumes the same.
 *
 * Pure: no clock, no I/O; the zone's rules are read from the runtime's built-in data.
 */
import { MonitorBadInputError } from './errors.js';

const DAY_MS = 86_400_000;

/** A span [fromMs, toMs) of local calendar time, with its bounds as ISO 8601 with UTC offsets. */
export interface LocalPeriod {
  readonly timeZone: string;
  /** First instant [ms]. */
  readonly fromMs: number;
  /** First instant after the period [ms]. */
  readonly toMs: number;
  /** fromMs as local time with its UTC offset, e.g. '2026-03-01T00:00:00+01:00'. */
  readonly from: string;
  /** toMs likewise, e.g. '2026-04-01T00:00:00+02:00'. */
  readonly to: string;
}

export interface LocalMonth extends LocalPeriod {
  /** 'YYYY-MM' */
  readonly month: string;
}

export interface LocalDay {
  /** 'YYYY-MM-DD' */
  readonly date: string;
  readonly fromMs: number;
  readonly toMs: number;
}

const formatters = new Map<string, Intl.DateTimeFormat>();

function formatter(timeZone: string): Intl.DateTimeFormat {
  let f = formatters.get(timeZone);
  if (f === undefined) {
    try {
      f = new Intl.DateTimeFormat('en-US', {
        timeZone,
        hourCycle: 'h23',
        year: 'numeric',
        month: 'numeric',
        day: 'numeric',
        hour: 'numeric',
        minute: 'numeric',
        second: 'numeric',
      });
    } catch {
      throw new MonitorBadInputError(
        'timeZone',
        timeZone,
        'is not an IANA time zone this runtime knows; use a name such as "Europe/Berlin" or "UTC"',
      );
    }
    formatters.set(timeZone, f);
  }
  return f;
}

/** Throws MonitorBadInputError unless the runtime knows this IANA time zone. */
export function assertTimeZone(timeZone: string): void {
  formatter(timeZone);
}

/** The zone's offset from UTC at an instant [ms], local minus UTC (+01:00 gives 3 600 000). */
export function zoneOffsetMs(timeZone: string, ms: number): number {
  const whole = Math.floor(ms / 1000) * 1000;
  const p: Record<string, number> = {};
  for (const part of formatter(timeZone).formatToParts(new Date(whole)))
    if (part.type !== 'literal') p[part.type] = Number(part.value);
  const wall = Date.UTC(p.year!, p.month! - 1, p.day!, p.hour!, p.minute!, p.second!);
  return wall - whole;
}

/** The instant [ms] a local date begins: local midnight, or the jump when the clocks skip midnight. */
function startOfLocalDate(timeZone: string, y: number, m: number, d: number): number {
  const wall = Date.UTC(y, m - 1, d);
  const before = zoneOffsetMs(timeZone, wall - DAY_MS);
  const after = zoneOffsetMs(timeZone, wall + DAY_MS);
  // The larger offset first: when midnight occurs twice, the earlier instant begins the day.
  for (const o of before >= after ? [before, after] : [after, before])
    if (zoneOffsetMs(timeZone, wall - o) === o) return wall - o;
  // Midnight skipped (clocks forward over it): the day begins at the jump, found by bisection
  // between an instant still before it (local time short of midnight) and one after it.
  let lo = wall - after;
  let hi = wall - before;
  while (hi - lo > 1) {
    const mid = Math.floor((lo + hi) / 2);
    if (mid + zoneOffsetMs(timeZone, mid) >= wall) hi = mid;
    else lo = mid;
  }
  return hi;
}

function pad(n: number, width = 2): string {
  return String(n).padStart(width, '0');
}

function civil(ms: number): { y: number; m: number; d: number } {
  const t = new Date(ms);
  return { y: t.getUTCFullYear(), m: t.getUTCMonth() + 1, d: t.getUTCDate() };
}

function parseMonth(month: string): { y: number; m: number } {
  const r = /^(\d{4})-(0[1-9]|1[0-2])$/.exec(month);
  if (r === null) throw new MonitorBadInputError('month', month, "must be 'YYYY-MM'");
  return { y: Number(r[1]), m: Number(r[2]) };
}

function parseDate(date: string): { y: number; m: number; d: number } {
  const r = /^(\d{4})-(\d{2})-(\d{2})$/.exec(date);
  const c = r === null ? undefined : civil(Date.UTC(Number(r[1]), Number(r[2]) - 1, Number(r[3])));
  if (r === null || c === undefined || c.m !== Number(r[2]) || c.d !== Number(r[3]))
    throw new MonitorBadInputError('date', date, "must be a calendar date 'YYYY-MM-DD'");
  return c;
}

/** An instant [ms] as local time with its UTC offset, ISO 8601 to the second ('...T00:00:00+05:30'). */
export function isoLocal(timeZone: string, ms: number): string {
  const offset = zoneOffsetMs(timeZone, ms);
  // ISO 8601 offsets are whole minutes; a historic offset with seconds is written in UTC instead.
  if (offset % 60_000 !== 0) return `${new Date(Math.floor(ms / 1000) * 1000).toISOString().slice(0, 19)}Z`;
  const wall = new Date(Math.floor(ms / 1000) * 1000 + offset).toISOString().slice(0, 19);
  const a = Math.abs(offset) / 60_000;
  return `${wall}${offset < 0 ? '-' : '+'}${pad(Math.floor(a / 60))}:${pad(a % 60)}`;
}

/** The local date 'YYYY-MM-DD' of an instant [ms]. */
export function localDateOf(timeZone: string, ms: number): string {
  return new Date(ms + zoneOffsetMs(timeZone, ms)).toISOString().slice(0, 10);
}

/** The local month 'YYYY-MM' of an instant [ms]. */
export function localMonthOf(timeZone: string, ms: number): string {
  return localDateOf(timeZone, ms).slice(0, 7);
}

/** The month 'YYYY-MM' `k` months after `month` (k may be negative). */
export function addMonths(month: string, k: number): string {
  const { y, m } = parseMonth(month);
  const c = civil(Date.UTC(y, m - 1 + k, 1));
  return `${pad(c.y, 4)}-${pad(c.m)}`;
}

/** The month 'YYYY-MM' before `month`. */
export function previousMonth(month: string): string {
  return addMonths(month, -1);
}

/** The date 'YYYY-MM-DD' `k` days after `date` (k may be negative). */
export function addDays(date: string, k: number): string {
  const { y, m, d } = parseDate(date);
  const c = civil(Date.UTC(y, m - 1, d + k));
  return `${pad(c.y, 4)}-${pad(c.m)}-${pad(c.d)}`;
}

/** A calendar month 'YYYY-MM' in a zone: local midnight on the 1st to local midnight on the next 1st. */
export function localMonth(month: string, timeZone: string): LocalMonth {
  const { y, m } = parseMonth(month);
  const fromMs = startOfLocalDate(timeZone, y, m, 1);
  const toMs = startOfLocalDate(timeZone, y, m + 1, 1);
  return {
    month,
    timeZone,
    fromMs,
    toMs,
    from: isoLocal(timeZone, fromMs),
    to: isoLocal(timeZone, toMs),
  };
}

/** `count` consecutive local days from the date `first` ('YYYY-MM-DD'), each [fromMs, toMs). */
export function localDays(timeZone: string, first: string, count: number): LocalDay[] {
  if (!Number.isInteger(count) || count < 0)
    throw new MonitorBadInputError('count', count, 'must be a whole number of days >= 0');
  const { y, m, d } = parseDate(first);
  const days: LocalDay[] = [];
  let start = startOfLocalDate(timeZone, y, m, d);
  for (let k = 0; k < count; k++) {
    const next = startOfLocalDate(timeZone, y, m, d + k + 1);
    const c = civil(Date.UTC(y, m - 1, d + k));
    days.push({ date: `${pad(c.y, 4)}-${pad(c.m)}-${pad(c.d)}`, fromMs: start, toMs: next });
    start = next;
  }
  return days;
}

/** The local days of a month, 1st to last. */
export function localDaysOfMonth(month: string, timeZone: string): LocalDay[] {
  const first = `${month}-01`;
  const { y, m } = parseMonth(month);
  const count = Math.round((Date.UTC(y, m, 1) - Date.UTC(y, m - 1, 1)) / DAY_MS);
  return localDays(timeZone, first, count);
}

/**
 * The zone a report over sites in `timeZones` can be cut in for `month`: the first by name when
 * every zone gives the month the same bounds (as Europe/Berlin and Europe/Paris do), undefined when
 * they differ; 'UTC' for no zone at all.
 */
export function sharedMonthZone(month: string, timeZones: readonly string[]): string | undefined {
  const zones = [...new Set(timeZones)].sort();
  const first = zones[0];
  if (first === undefined) return 'UTC';
  const p = localMonth(month, first);
  for (const z of zones.slice(1)) {
    const q = localMonth(month, z);
    if (q.fromMs !== p.fromMs || q.toMs !== p.toMs) return undefined;
  }
  return first;
}
