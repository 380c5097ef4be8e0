/**
 * Calendar months and days in a site's local time (an IANA time zone), as UTC instants [ms].
 * Plants plan in local time: at a Berlin site "March 2026" runs from local midnight on 1 March to
 * local midnight on 1 April, and the day the clocks change has 23 or 25 hours.
 *
 * luxon does the zone work: offsets from the IANA time-zone database the runtime carries (Intl,
 * ICU), local wall times turned into instants, calendar arithmetic, ISO 8601 with offsets.
 * What we decide on top of it:
 * - A day starts at local midnight. Where midnight occurs twice (clocks back over it), the earlier
 *   one: luxon lists both (getPossibleOffsets) and we take the first (luxon's own pick follows
 *   the offset of its first guess, which for fromObject is today's).
 * - Where the clocks jump over midnight (some zones change at 24:00), the day starts at the jump,
 *   the first instant of that local date: luxon moves a skipped wall time forward by the jump,
 *   and a jump from 24:00 lands on it. A jump that straddles midnight instead starts the day at
 *   midnight of the old offset, after the jump: in tzdata 2025b only Toronto and its links on
 *   31 March 1919 (23:30 to 00:30, so the day starts 30 minutes late; every transition zdump
 *   lists for 1800-2040 was checked).
 * - Assumed, as luxon and the ingest service's zone resolver assume: a zone changes its offset at
 *   most once within a day either side of a midnight (common practice, no source).
 * - A wall time is turned into an instant from an offset guess at that date, not at today's date,
 *   so results never depend on the clock.
 *
 * Pure: no I/O, nothing depends on the clock; the zone rules are the runtime's built-in data.
 */
import { DateTime, type DateTimeMaybeValid, IANAZone } from 'luxon';
import { MonitorBadInputError } from './errors.js';

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

const knownZones = new Set<string>();

/**
 * The zone as a luxon IANAZone, never luxon's fixed UTC zone: 'UTC' then writes offsets as
 * '+00:00' like every other zone, not 'Z'.
 */
function zoneOf(timeZone: string): IANAZone {
  // isValidZone() builds a formatter on every call, and create() would cache an unknown name too
  // (names come from requests): check a name once, and cache only the zones that exist.
  if (!knownZones.has(timeZone)) {
    if (!IANAZone.isValidZone(timeZone))
      throw new MonitorBadInputError(
        'timeZone',
        timeZone,
        'is not an IANA time zone this runtime knows; use a name such as "Europe/Berlin" or "UTC"',
      );
    knownZones.add(timeZone);
  }
  return IANAZone.create(timeZone);
}

/** Throws MonitorBadInputError unless the runtime knows this IANA time zone. */
export function assertTimeZone(timeZone: string): void {
  zoneOf(timeZone);
}

/** An instant [ms] in a zone; refuses NaN and instants beyond luxon's range (±100 million days). */
function at(zone: IANAZone, ms: number): DateTime<true> {
  const t = DateTime.fromMillis(ms, { zone });
  if (!t.isValid)
    throw new MonitorBadInputError('ms', ms, 'must be a finite instant in ms since 1970-01-01T00:00:00Z');
  return t;
}

/** The zone's offset from UTC at an instant [ms], local minus UTC (+01:00 gives 3 600 000). */
export function zoneOffsetMs(timeZone: string, ms: number): number {
  // luxon gives minutes, fractional for historic offsets with seconds; back to whole ms.
  return Math.round(at(zoneOf(timeZone), ms).offset * 60_000);
}

/** A calendar date or month in the proleptic Gregorian calendar, with no zone (luxon on UTC). */
function calendar(y: number, m: number, d = 1): DateTimeMaybeValid {
  return DateTime.fromObject({ year: y, month: m, day: d }, { zone: 'utc' });
}

/** The instant [ms] a local date begins: local midnight, the earlier when it occurs twice. */
function startOfLocalDate(zone: IANAZone, date: DateTime<true>): number {
  // setZone(keepLocalTime) guesses the offset at the date itself (fromObject would guess today's).
  const midnight = date.setZone(zone, { keepLocalTime: true });
  return Math.min(...midnight.getPossibleOffsets().map((t) => t.toMillis()));
}

function parseMonth(month: string): DateTime<true> {
  const r = /^(\d{4})-(0[1-9]|1[0-2])$/.exec(month);
  const c = r === null ? undefined : calendar(Number(r[1]), Number(r[2]));
  if (c === undefined || !c.isValid) throw new MonitorBadInputError('month', month, "must be 'YYYY-MM'");
  return c;
}

function parseDate(date: string): DateTime<true> {
  const r = /^(\d{4})-(\d{2})-(\d{2})$/.exec(date);
  const c = r === null ? undefined : calendar(Number(r[1]), Number(r[2]), Number(r[3]));
  if (c === undefined || !c.isValid)
    throw new MonitorBadInputError('date', date, "must be a calendar date 'YYYY-MM-DD'");
  return c;
}

/** An instant [ms] as local time with its UTC offset, ISO 8601 to the second ('...T00:00:00+05:30'). */
export function isoLocal(timeZone: string, ms: number): string {
  const t = at(zoneOf(timeZone), Math.floor(ms / 1000) * 1000);
  // ISO 8601 offsets are whole minutes; a historic offset with seconds is written in UTC instead.
  return (Number.isInteger(t.offset) ? t : t.toUTC()).toISO({ suppressMilliseconds: true });
}

/** The local date 'YYYY-MM-DD' of an instant [ms]. */
export function localDateOf(timeZone: string, ms: number): string {
  return at(zoneOf(timeZone), ms).toISODate();
}

/** The local month 'YYYY-MM' of an instant [ms]. */
export function localMonthOf(timeZone: string, ms: number): string {
  return localDateOf(timeZone, ms).slice(0, 7);
}

/** The month 'YYYY-MM' `k` months after `month` (k may be negative). */
export function addMonths(month: string, k: number): string {
  return parseMonth(month).plus({ months: k }).toISODate().slice(0, 7);
}

/** The month 'YYYY-MM' before `month`. */
export function previousMonth(month: string): string {
  return addMonths(month, -1);
}

/** The date 'YYYY-MM-DD' `k` days after `date` (k may be negative). */
export function addDays(date: string, k: number): string {
  return parseDate(date).plus({ days: k }).toISODate();
}

/** A calendar month 'YYYY-MM' in a zone: local midnight on the 1st to local midnight on the next 1st. */
export function localMonth(month: string, timeZone: string): LocalMonth {
  const zone = zoneOf(timeZone);
  const first = parseMonth(month);
  const fromMs = startOfLocalDate(zone, first);
  const toMs = startOfLocalDate(zone, first.plus({ months: 1 }));
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
  const zone = zoneOf(timeZone);
  let date = parseDate(first);
  let start = startOfLocalDate(zone, date);
  const days: LocalDay[] = [];
  for (let k = 0; k < count; k++) {
    const next = date.plus({ days: 1 });
    const end = startOfLocalDate(zone, next);
    days.push({ date: date.toISODate(), fromMs: start, toMs: end });
    date = next;
    start = end;
  }
  return days;
}

/** The local days of a month, 1st to last. */
export function localDaysOfMonth(month: string, timeZone: string): LocalDay[] {
  return localDays(timeZone, `${month}-01`, parseMonth(month).daysInMonth);
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
