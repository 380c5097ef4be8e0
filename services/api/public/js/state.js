// What an operator must see first on a machine: one state word, from the fleet item (GET /api/fleet).
import { age, when } from './common.js';

/**
 * State of a machine for the fleet card and the machine header.
 * - out-of-service: set so in the plant file;
 * - no-data: no valid result yet, or none within the health window (one day) before now: the
 *   figures shown are old and the band says nothing about today;
 * - alarm / warning / normal: the drift band of the last valid hour;
 * - unknown: no baseline or bands to judge against.
 */
export function machineState(m, generatedAt) {
  const instrument = m.openAlertsByCategory?.instrument ?? 0;
  if (m.outOfService) return { key: 'out-of-service', label: 'out of service', detail: '' };
  if (m.current === null)
    return {
      key: 'no-data',
      label: 'no valid result',
      detail: instrument > 0 ? 'no valid result yet; see the instrument alert' : 'no valid result yet',
    };
  const ageMs = Date.parse(generatedAt) - Date.parse(m.current.windowEnd);
  if (ageMs > m.health.windowMs) {
    const flags = m.health.lastFlags.filter((f) => f.startsWith('fault:')).map((f) => f.slice(6));
    return {
      key: 'no-data',
      label: `no valid data for ${age(ageMs)}`,
      detail:
        `these figures are from the last valid hour, to ${when(m.current.windowEnd)}` +
        (flags.length > 0 ? `; newest result flagged ${flags.join(', ')}` : ''),
    };
  }
  if (m.band === 'alarm' || m.band === 'warning') return { key: m.band, label: m.band, detail: '' };
  if (m.band === 'normal') return { key: 'normal', label: 'normal', detail: '' };
  return { key: 'unknown', label: m.hasBaseline ? 'no bands' : 'no baseline yet', detail: '' };
}

/** "1 drift alert, 2 instrument alerts" from the fleet item's counts. */
export function openAlertsText(m) {
  const by = m.openAlertsByCategory ?? { drift: m.openAlerts, instrument: 0 };
  const part = (n, what) => (n > 0 ? `${n} ${what} alert${n > 1 ? 's' : ''}` : null);
  return [part(by.drift, 'drift'), part(by.instrument, 'instrument')].filter((x) => x !== null).join(', ');
}
