/**
 * Which monthly exports are due: per site time zone, each of the last lookBackMonths local months
 * that has ended in that zone at least settleMs ago. Zones whose month has the same bounds (say
 * Europe/Berlin and Europe/Paris) share one export, since an export is kept by its period; the
 * report is then cut in the first of those zones by name. Pure.
 */
import { type LocalMonth, localMonth, localMonthOf, previousMonth } from '@isentrope/monitor';

export interface DueMonth {
  /** 'YYYY-MM' */
  readonly month: string;
  /** Site zones whose local month has these bounds, sorted by name. */
  readonly timeZones: readonly string[];
  /** The month in timeZones[0]. */
  readonly period: LocalMonth;
}

export function dueMonths(
  nowMs: number,
  timeZones: readonly string[],
  lookBackMonths: number,
  settleMs: number,
): DueMonth[] {
  const groups = new Map<string, { month: string; timeZones: string[]; period: LocalMonth }>();
  for (const zone of [...new Set(timeZones)].sort()) {
    let month = localMonthOf(zone, nowMs);
    for (let k = 0; k < lookBackMonths; k++) {
      month = previousMonth(month);
      const period = localMonth(month, zone);
      if (period.toMs + settleMs > nowMs) continue;
      const key = `${month}/${period.fromMs}/${period.toMs}`;
      const group = groups.get(key);
      if (group === undefined) groups.set(key, { month, timeZones: [zone], period });
      else group.timeZones.push(zone);
    }
  }
  return [...groups.values()].sort(
    (a, b) => a.period.fromMs - b.period.fromMs || a.period.timeZone.localeCompare(b.period.timeZone),
  );
}
