/**
 * Expected instants are worked out by hand from each zone's daylight-saving rule as stated beside
 * the check (the rules of the IANA time-zone database; weekdays of 2026 from the Gregorian
 * calendar: 1 March 2026 is a Sunday). The same instants were also printed by Python's zoneinfo
 * over Debian's tzdata 2025b (/usr/bin/python3) as a second, independent copy of the database.
 */
import { describe, expect, it } from 'vitest';
import {
  addDays,
  addMonths,
  isoLocal,
  localDateOf,
  localDays,
  localDaysOfMonth,
  localMonth,
  localMonthOf,
  previousMonth,
  sharedMonthZone,
  zoneOffsetMs,
} from './local-calendar.js';

const HOUR = 3_600_000;
const hours = (d: { fromMs: number; toMs: number }): number => (d.toMs - d.fromMs) / HOUR;
const day = (zone: string, date: string) => localDays(zone, date, 1)[0]!;
const expectDay = (zone: string, date: string, fromMs: number, toMs: number): void => {
  expect(day(zone, date)).toEqual({ date, fromMs, toMs });
};

describe('localMonth', () => {
  it('UTC: the calendar month, February of a leap year included', () => {
    // Gregorian calendar (common practice, no source): 2028 is a leap year.
    const feb = localMonth('2028-02', 'UTC');
    expect(feb.fromMs).toBe(Date.UTC(2028, 1, 1));
    expect(hours(feb)).toBe(29 * 24);
    expect(localMonth('2026-03', 'UTC')).toEqual({
      month: '2026-03',
      timeZone: 'UTC',
      fromMs: Date.UTC(2026, 2, 1),
      toMs: Date.UTC(2026, 3, 1),
      from: '2026-03-01T00:00:00+00:00',
      to: '2026-04-01T00:00:00+00:00',
    });
    expect(localDaysOfMonth('2026-03', 'UTC').every((d) => hours(d) === 24)).toBe(true);
  });

  it('Europe/London, March 2026: GMT (+00:00) to BST (+01:00), the 29th has 23 hours', () => {
    // EU rule: summer time from the last Sunday of March, 01:00 UTC (29 March 2026).
    const m = localMonth('2026-03', 'Europe/London');
    expect(m.fromMs).toBe(Date.UTC(2026, 2, 1, 0));
    expect(m.toMs).toBe(Date.UTC(2026, 2, 31, 23)); // 1 April 00:00 BST
    expect(m.from).toBe('2026-03-01T00:00:00+00:00');
    expect(m.to).toBe('2026-04-01T00:00:00+01:00');
    expect(hours(m)).toBe(31 * 24 - 1);
    const days = localDaysOfMonth('2026-03', 'Europe/London');
    expect(days).toHaveLength(31);
    expect(days[28]).toEqual({
      date: '2026-03-29',
      fromMs: Date.UTC(2026, 2, 29, 0),
      toMs: Date.UTC(2026, 2, 29, 23),
    });
    expect(days.filter((d) => hours(d) !== 24).map((d) => d.date)).toEqual(['2026-03-29']);
    // The days tile the month with no gap or overlap.
    expect(days[0]!.fromMs).toBe(m.fromMs);
    expect(days.at(-1)!.toMs).toBe(m.toMs);
    for (let i = 1; i < days.length; i++) expect(days[i]!.fromMs).toBe(days[i - 1]!.toMs);
  });

  it('Europe/London, October 2026: BST back to GMT, the 25th has 25 hours', () => {
    // EU rule: summer time ends the last Sunday of October, 01:00 UTC (25 October 2026).
    const m = localMonth('2026-10', 'Europe/London');
    expect(m.fromMs).toBe(Date.UTC(2026, 8, 30, 23)); // 1 October 00:00 BST
    expect(m.toMs).toBe(Date.UTC(2026, 10, 1, 0)); // 1 November 00:00 GMT
    expect(m.from).toBe('2026-10-01T00:00:00+01:00');
    expect(m.to).toBe('2026-11-01T00:00:00+00:00');
    expect(hours(m)).toBe(31 * 24 + 1);
    expectDay('Europe/London', '2026-10-25', Date.UTC(2026, 9, 24, 23), Date.UTC(2026, 9, 26, 0));
  });

  it('America/Chicago: CST (-06:00) to CDT (-05:00) on 8 March, back on 1 November 2026', () => {
    // US rule (Energy Policy Act of 2005): daylight time from the second Sunday of March, 02:00
    // local (8 March 2026), to the first Sunday of November, 02:00 local (1 November 2026).
    const mar = localMonth('2026-03', 'America/Chicago');
    expect(mar.fromMs).toBe(Date.UTC(2026, 2, 1, 6));
    expect(mar.toMs).toBe(Date.UTC(2026, 3, 1, 5));
    expect(mar.from).toBe('2026-03-01T00:00:00-06:00');
    expect(mar.to).toBe('2026-04-01T00:00:00-05:00');
    expect(hours(day('America/Chicago', '2026-03-08'))).toBe(23);
    // November begins with its 25-hour day.
    const nov = localMonth('2026-11', 'America/Chicago');
    expect(nov.fromMs).toBe(Date.UTC(2026, 10, 1, 5));
    expect(nov.toMs).toBe(Date.UTC(2026, 11, 1, 6));
    expect(localDaysOfMonth('2026-11', 'America/Chicago')[0]).toEqual({
      date: '2026-11-01',
      fromMs: Date.UTC(2026, 10, 1, 5),
      toMs: Date.UTC(2026, 10, 2, 6),
    });
  });

  it('Asia/Kolkata: +05:30 all year, every day 24 hours', () => {
    // India Standard Time, UTC+05:30, no daylight saving (IANA Asia/Kolkata).
    const m = localMonth('2026-03', 'Asia/Kolkata');
    expect(m.fromMs).toBe(Date.UTC(2026, 1, 28, 18, 30));
    expect(m.toMs).toBe(Date.UTC(2026, 2, 31, 18, 30));
    expect(m.from).toBe('2026-03-01T00:00:00+05:30');
    expect(m.to).toBe('2026-04-01T00:00:00+05:30');
    expect(localDaysOfMonth('2026-03', 'Asia/Kolkata').every((d) => hours(d) === 24)).toBe(true);
  });

  it('Pacific/Auckland: southern summer, NZDT (+13:00) ends 5 April and begins 27 September 2026', () => {
    // New Zealand rule (since 2007): daylight time from the last Sunday of September, 02:00 NZST
    // (27 September 2026), to the first Sunday of April, 03:00 NZDT (5 April 2026); NZST is +12:00.
    const mar = localMonth('2026-03', 'Pacific/Auckland');
    expect(mar.fromMs).toBe(Date.UTC(2026, 1, 28, 11));
    expect(mar.toMs).toBe(Date.UTC(2026, 2, 31, 11));
    expect(hours(mar)).toBe(31 * 24);
    const apr = localMonth('2026-04', 'Pacific/Auckland');
    expect(apr.from).toBe('2026-04-01T00:00:00+13:00');
    expect(apr.to).toBe('2026-05-01T00:00:00+12:00');
    expect(hours(apr)).toBe(30 * 24 + 1);
    expectDay('Pacific/Auckland', '2026-04-05', Date.UTC(2026, 3, 4, 11), Date.UTC(2026, 3, 5, 12));
    const sep = day('Pacific/Auckland', '2026-09-27');
    expect(sep.fromMs).toBe(Date.UTC(2026, 8, 26, 12));
    expect(hours(sep)).toBe(23);
  });

  it('America/Santiago: where the clocks jump over midnight, the day begins at the jump', () => {
    // Chile's rule since 2019, from memory: daylight time from the first Sunday of September, the
    // clocks going from 24:00 on Saturday (-04:00) to 01:00 (-03:00): 6 September 2026, 04:00 UTC.
    // 00:00 on the 6th never occurs; the 6th runs 01:00-03:00 to midnight, 23 hours.
    const d = day('America/Santiago', '2026-09-06');
    expect(d.fromMs).toBe(Date.UTC(2026, 8, 6, 4));
    expect(d.toMs).toBe(Date.UTC(2026, 8, 7, 3));
    expect(isoLocal('America/Santiago', d.fromMs)).toBe('2026-09-06T01:00:00-03:00');
    expect(day('America/Santiago', '2026-09-05').toMs).toBe(d.fromMs);
  });

  it('America/Havana: midnight skipped in March, twice in November; the day begins at its first instant', () => {
    // Cuba's rule, from memory: daylight time (-04:00) from the second Sunday of March at 00:00
    // standard time (-05:00), clocks to 01:00; back on the first Sunday of November at 01:00, clocks
    // to 00:00. So 8 March 2026 begins at 05:00 UTC (23 h); 1 November 2026 sees 00:00 at 04:00
    // and again at 05:00 UTC, and begins at the first (25 h).
    expectDay('America/Havana', '2026-03-08', Date.UTC(2026, 2, 8, 5), Date.UTC(2026, 2, 9, 4));
    expectDay('America/Havana', '2026-11-01', Date.UTC(2026, 10, 1, 4), Date.UTC(2026, 10, 2, 5));
  });
});

describe('calendar helpers', () => {
  it('month and date arithmetic, local date and month of an instant', () => {
    expect(previousMonth('2026-01')).toBe('2025-12');
    expect(addMonths('2026-11', 3)).toBe('2027-02');
    expect(addDays('2026-03-01', -1)).toBe('2026-02-28');
    expect(addDays('2028-02-28', 1)).toBe('2028-02-29');
    // 31 March 2026, 23:30 in Chicago (CDT, -05:00) is 1 April 04:30 UTC.
    const t = Date.UTC(2026, 3, 1, 4, 30);
    expect(localDateOf('America/Chicago', t)).toBe('2026-03-31');
    expect(localMonthOf('America/Chicago', t)).toBe('2026-03');
    expect(localMonthOf('UTC', t)).toBe('2026-04');
    expect(zoneOffsetMs('America/Chicago', t)).toBe(-5 * HOUR);
    expect(isoLocal('America/Chicago', t)).toBe('2026-03-31T23:30:00-05:00');
  });

  it('sharedMonthZone: one zone for sites whose month has the same bounds, none when they differ', () => {
    // Europe/Berlin and Europe/Paris: both CET/CEST under the EU rule; Europe/London is an hour behind.
    expect(sharedMonthZone('2026-03', ['Europe/Paris', 'Europe/Berlin'])).toBe('Europe/Berlin');
    expect(sharedMonthZone('2026-03', ['Europe/Paris', 'Europe/London'])).toBeUndefined();
    // Europe/London keeps GMT (+00:00) from 25 October 2026 to 28 March 2027: December is UTC's December.
    expect(sharedMonthZone('2026-12', ['UTC', 'Europe/London'])).toBe('Europe/London');
    expect(sharedMonthZone('2026-03', [])).toBe('UTC');
  });

  it('refuses an unknown zone, a bad month, a bad date and a bad count, saying what is allowed', () => {
    expect(() => localMonth('2026-03', 'Mars/Olympus')).toThrow(/IANA time zone.*Europe\/Berlin/);
    expect(() => localMonth('2026-13', 'UTC')).toThrow(/YYYY-MM/);
    expect(() => localDays('UTC', '2026-02-30', 1)).toThrow(/YYYY-MM-DD/);
    expect(() => localDays('UTC', '2026-02-01', -1)).toThrow(/>= 0/);
  });
});
