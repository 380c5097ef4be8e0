/**
 * The one map between the alert states stored in the alerts table (migrations/0003) and the
 * lifecycle reducer's statuses (./alerts.ts, ANSI/ISA-18.2), and the reducer's state of a stored
 * row. The alert job and the API's operator actions both read and write rows through it.
 */
import type { AlertState, AlertStatus } from './alerts.js';

/** The states the alerts table allows (migrations/0003 CHECK), in lifecycle order. */
export const STORED_ALERT_STATES = [
  'normal',
  'active_unacknowledged',
  'active_acknowledged',
  'returned_unacknowledged',
  'shelved',
  'suppressed',
  'out_of_service',
] as const;

export type StoredAlertState = (typeof STORED_ALERT_STATES)[number];

/** Stored state to reducer status; 'suppressed' has none (it is left to the operator). */
export const STORED_TO_STATUS: Readonly<Record<Exclude<StoredAlertState, 'suppressed'>, AlertStatus>> = {
  normal: 'normal',
  active_unacknowledged: 'active-unack',
  active_acknowledged: 'active-ack',
  returned_unacknowledged: 'rtn-unack',
  shelved: 'shelved',
  out_of_service: 'out-of-service',
};

/** Reducer status to stored state. */
export const STATUS_TO_STORED: Readonly<Record<AlertStatus, Exclude<StoredAlertState, 'suppressed'>>> = {
  normal: 'normal',
  'active-unack': 'active_unacknowledged',
  'active-ack': 'active_acknowledged',
  'rtn-unack': 'returned_unacknowledged',
  shelved: 'shelved',
  'out-of-service': 'out_of_service',
};

/** What of a stored alert row the reducer's state rests on. */
export interface StoredAlert {
  readonly state: StoredAlertState;
  readonly category: 'drift' | 'instrument';
  readonly level: 'warning' | 'alarm';
  /** The alert job sets cleared_at when the condition returns. */
  readonly cleared: boolean;
  /** [ms], or null when not shelved. */
  readonly shelvedUntilMs: number | null;
  readonly shelvedBy: string | null;
}

/**
 * The reducer's state of a stored row, or undefined for 'suppressed' (no reducer state). The
 * condition is active in the active states, inactive once returned or normal; while shelved or
 * out of service it is active unless the row is cleared.
 */
export function storedAlertState(a: StoredAlert): AlertState | undefined {
  if (a.state === 'suppressed') return undefined;
  const status = STORED_TO_STATUS[a.state];
  const conditionActive =
    status === 'active-unack' || status === 'active-ack'
      ? true
      : status === 'rtn-unack' || status === 'normal'
        ? false
        : !a.cleared;
  return {
    type: a.category === 'instrument' ? 'instrument-fault' : 'drift',
    status,
    conditionActive,
    severity: a.level,
    ...(a.shelvedUntilMs !== null ? { shelvedUntil: a.shelvedUntilMs } : {}),
    ...(a.shelvedBy !== null ? { shelvedBy: a.shelvedBy } : {}),
  };
}
