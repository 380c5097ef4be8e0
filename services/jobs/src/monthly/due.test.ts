// Month ends worked out from each zone's rule as stated beside the check (IANA time-zone database).
import { describe, expect, it } from 'vitest';
import { dueMonths } from './due.js';

const HOUR = 3_600_000;
const SETTLE = 2 * HOUR;

describe('dueMonths', () => {
  it('a month is due once it has ended in the site zone plus the settle time', () => {
    // March 2026 ends: UTC at 1 April 00:00Z; America/Chicago (CDT, -05:00, US rule: daylight time
    // from the second Sunday of March) at 05:00Z; Asia/Kolkata (+05:30) at 31 March 18:30Z.
    const zones = ['UTC', 'America/Chicago', 'Asia/Kolkata'];
    const march = (now: number) =>
      dueMonths(now, zones, 1, SETTLE)
        .filter((d) => d.month === '2026-03')
        .map((d) => d.timeZones.join());
    expect(march(Date.UTC(2026, 2, 31, 20, 29))).toEqual([]);
    expect(march(Date.UTC(2026, 2, 31, 20, 30))).toEqual(['Asia/Kolkata']);
    expect(march(Date.UTC(2026, 3, 1, 1, 59))).toEqual(['Asia/Kolkata']);
    expect(march(Date.UTC(2026, 3, 1, 2))).toEqual(['Asia/Kolkata', 'UTC']);
    expect(march(Date.UTC(2026, 3, 1, 6, 59))).toEqual(['Asia/Kolkata', 'UTC']);
    expect(march(Date.UTC(2026, 3, 1, 7))).toEqual(['Asia/Kolkata', 'UTC', 'America/Chicago']);
  });

  it('looks back whole local months, oldest first, each with its bounds', () => {
    // Europe/Berlin: CET +01:00 in winter (EU rule: summer time from the last Sunday of March).
    const due = dueMonths(Date.UTC(2026, 2, 10), ['Europe/Berlin'], 3, SETTLE);
    expect(due.map((d) => d.month)).toEqual(['2025-12', '2026-01', '2026-02']);
    expect(due[2]!.period.from).toBe('2026-02-01T00:00:00+01:00');
    expect(due[2]!.period.toMs).toBe(Date.UTC(2026, 1, 28, 23));
  });

  it('zones whose month has the same bounds share one export, cut in the first by name', () => {
    // Europe/Paris and Europe/Berlin both keep CET/CEST under the EU rule; Europe/London is an hour behind.
    const due = dueMonths(
      Date.UTC(2026, 3, 2),
      ['Europe/Paris', 'Europe/London', 'Europe/Berlin'],
      1,
      SETTLE,
    );
    expect(due.map((d) => [d.month, d.timeZones, d.period.timeZone])).toEqual([
      ['2026-03', ['Europe/Berlin', 'Europe/Paris'], 'Europe/Berlin'],
      ['2026-03', ['Europe/London'], 'Europe/London'],
    ]);
  });
});
