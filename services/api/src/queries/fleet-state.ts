/**
 * What an operator must see first on a machine: one state word for the fleet card and the machine
 * header, sent by the API so the browser only displays it. The band part is the severity the alert
 * job stored (packages/monitor stepBand, with its deadband, delays and uncertainty test); this adds
 * only what the band cannot say: out of service, and figures too old to speak for today.
 */
import { type FleetRow, HEALTH_WINDOW_MS } from './fleet.js';

export type FleetStateKey = 'out-of-service' | 'no-data' | 'alarm' | 'warning' | 'normal' | 'unknown';

export interface FleetState {
  readonly key: FleetStateKey;
  readonly label: string;
  /** A sentence under the figures when they need one, else ''. */
  readonly detail: string;
}

/** A duration as the dashboard writes it: minutes below 2 h, hours below 2 days, then days. */
export function ageText(ms: number): string {
  if (!Number.isFinite(ms)) return '–';
  const min = Math.round(ms / 60_000);
  if (min < 120) return `${min} min`;
  const h = Math.round(ms / 3_600_000);
  if (h < 48) return `${h} h`;
  return `${Math.round(ms / 86_400_000)} days`;
}

/** An instant as the dashboard writes it: 'YYYY-MM-DD HH:MM UTC'. */
export function utcText(ms: number): string {
  const iso = new Date(ms).toISOString();
  return `${iso.slice(0, 10)} ${iso.slice(11, 16)} UTC`;
}

/** The band as the fleet item states it: the stored severity, 'unknown' out of service or before the alert job's first pass. */
export function fleetBand(r: FleetRow): 'normal' | 'warning' | 'alarm' | 'unknown' {
  return r.out_of_service || r.baseline_id === null ? 'unknown' : (r.band_severity ?? 'unknown');
}

/**
 * - out-of-service: set so in the plant file;
 * - no-data: no valid result yet, or none within the health window (one day) before now: the
 *   figures shown are old and the band says nothing about today;
 * - alarm / warning / normal: the stored drift band;
 * - unknown: no baseline yet, or no band judged yet.
 */
export function fleetState(r: FleetRow, nowMs: number): FleetState {
  if (r.out_of_service) return { key: 'out-of-service', label: 'out of service', detail: '' };
  const instrument = r.open_instrument > 0;
  if (r.last_valid_time === null)
    return {
      key: 'no-data',
      label: 'no valid result',
      detail: instrument ? 'no valid result yet; see the instrument alert' : 'no valid result yet',
    };
  const ageMs = nowMs - r.last_valid_time.getTime();
  if (ageMs > HEALTH_WINDOW_MS) {
    const flags = (r.last_flags ?? []).filter((f) => f.startsWith('fault:')).map((f) => f.slice(6));
    return {
      key: 'no-data',
      label: `no valid data for ${ageText(ageMs)}`,
      detail:
        `these figures are from the last valid hour, to ${utcText(r.last_valid_time.getTime())}` +
        (flags.length > 0 ? `; newest result flagged ${flags.join(', ')}` : ''),
    };
  }
  const band = fleetBand(r);
  if (band !== 'unknown') return { key: band, label: band, detail: '' };
  return {
    key: 'unknown',
    label: r.baseline_id !== null ? 'no band judged yet' : 'no baseline yet',
    detail: '',
  };
}
