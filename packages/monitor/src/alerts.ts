/**
 * Alert lifecycle as a pure reducer, with the states of ANSI/ISA-18.2 (alarm management):
 *   normal            condition inactive, nothing to acknowledge;
 *   active-unack      condition active, not yet acknowledged;
 *   active-ack        condition active, acknowledged;
 *   rtn-unack         condition returned to normal before it was acknowledged;
 *   shelved           annunciation suppressed by an operator until an expiry time;
 *   out-of-service    removed from service (maintenance, suppressed by design): raises nothing.
 * The process condition keeps being tracked while shelved or out of service, so that unshelving
 * or returning to service lands in the right state (active-unack when the condition is active).
 * A rise in severity (warning -> alarm) while active annunciates again (back to active-unack).
 *
 * Performance alerts (drift, efficiency, specific work, power, entropy generation) and instrument
 * faults are different alert types with different categories; one never stands in for the other.
 * Invalid requests (acknowledge when nothing awaits it, shelve until a past time) are returned as
 * a rejection with a stable code, and the state is unchanged.
 */
import type { Severity } from './bands.js';

export type AlertStatus =
  | 'normal'
  | 'active-unack'
  | 'active-ack'
  | 'rtn-unack'
  | 'shelved'
  | 'out-of-service';

export type AlertType =
  | 'drift'
  | 'efficiency'
  | 'specific-work'
  | 'power'
  | 'entropy-generation'
  | 'instrument-fault';
export type AlertCategory = 'performance' | 'instrument';

/** The category of an alert type: instrument faults are kept apart from performance alerts. */
export function alertCategory(type: AlertType): AlertCategory {
  return type === 'instrument-fault' ? 'instrument' : 'performance';
}

export interface AlertState {
  readonly type: AlertType;
  readonly status: AlertStatus;
  /** Whether the underlying condition is active now (tracked in every status). */
  readonly conditionActive: boolean;
  /** Severity of the active condition, or of the last one. */
  readonly severity: Exclude<Severity, 'normal'> | undefined;
  /** Set while shelved [ms]. */
  readonly shelvedUntil?: number;
  readonly shelvedBy?: string;
}

export type AlertEvent =
  | { readonly type: 'activate'; readonly severity: Exclude<Severity, 'normal'>; readonly reason?: string }
  | { readonly type: 'clear'; readonly reason?: string }
  | { readonly type: 'acknowledge'; readonly user: string; readonly comment?: string }
  | { readonly type: 'shelve'; readonly user: string; readonly untilMs: number; readonly comment?: string }
  | { readonly type: 'unshelve'; readonly user: string; readonly comment?: string }
  | { readonly type: 'remove-from-service'; readonly user: string; readonly comment?: string }
  | { readonly type: 'return-to-service'; readonly user: string; readonly comment?: string }
  /** Only lets time pass: applies a shelve expiry that is due. */
  | { readonly type: 'tick' };

export interface AlertTransition {
  readonly from: AlertStatus;
  readonly to: AlertStatus;
  readonly reason: string;
  /** [ms] */
  readonly at: number;
  readonly by?: string;
  readonly comment?: string;
}

export type AlertRejectionCode =
  | 'ALERT_NOTHING_TO_ACKNOWLEDGE'
  | 'ALERT_SHELVE_IN_PAST'
  | 'ALERT_NOT_SHELVED'
  | 'ALERT_OUT_OF_SERVICE'
  | 'ALERT_NOT_OUT_OF_SERVICE';

export interface AlertStep {
  readonly state: AlertState;
  /** Status changes made by this step, in order (a due shelve expiry comes first). */
  readonly transitions: readonly AlertTransition[];
  /** Set when the event was refused; the state is then unchanged (apart from a due expiry). */
  readonly rejected?: { readonly code: AlertRejectionCode; readonly reason: string };
}

/** A new alert of the given type: normal, condition inactive. */
export function initialAlert(type: AlertType): AlertState {
  return { type, status: 'normal', conditionActive: false, severity: undefined };
}

/** Where an alert lands when it leaves shelving or out-of-service. */
function resumeStatus(s: AlertState): AlertStatus {
  return s.conditionActive ? 'active-unack' : 'normal';
}

function withoutShelf(s: AlertState, status: AlertStatus): AlertState {
  return { type: s.type, status, conditionActive: s.conditionActive, severity: s.severity };
}

/** Apply one event at time `now` [ms]. Pure: returns the new state and the transitions made. */
export function stepAlert(state: AlertState, event: AlertEvent, now: number): AlertStep {
  const transitions: AlertTransition[] = [];
  let s = state;
  // A shelf that has expired ends before anything else happens at `now`.
  if (s.status === 'shelved' && s.shelvedUntil !== undefined && now >= s.shelvedUntil) {
    const to = resumeStatus(s);
    transitions.push({ from: 'shelved', to, reason: 'shelve expired', at: now });
    s = withoutShelf(s, to);
  }
  const move = (to: AlertStatus, reason: string, by?: string, comment?: string): void => {
    if (to === s.status) return;
    const tr: AlertTransition = { from: s.status, to, reason, at: now };
    transitions.push({
      ...tr,
      ...(by !== undefined ? { by } : {}),
      ...(comment !== undefined ? { comment } : {}),
    });
  };
  const reject = (code: AlertRejectionCode, reason: string): AlertStep => ({
    state: s,
    transitions,
    rejected: { code, reason },
  });

  switch (event.type) {
    case 'tick':
      return { state: s, transitions };
    case 'activate': {
      const escalated = s.conditionActive && s.severity === 'warning' && event.severity === 'alarm';
      const next: AlertState = { ...s, conditionActive: true, severity: event.severity };
      const reason = event.reason ?? `condition active (${event.severity})`;
      if (s.status === 'normal' || s.status === 'rtn-unack' || (s.status === 'active-ack' && escalated)) {
        move('active-unack', escalated ? `severity rose to alarm: ${reason}` : reason);
        return { state: { ...next, status: 'active-unack' }, transitions };
      }
      return { state: next, transitions }; // shelved / out-of-service: tracked, not annunciated
    }
    case 'clear': {
      const next: AlertState = { ...s, conditionActive: false };
      const reason = event.reason ?? 'condition returned to normal';
      if (s.status === 'active-unack') {
        move('rtn-unack', reason);
        return { state: { ...next, status: 'rtn-unack' }, transitions };
      }
      if (s.status === 'active-ack') {
        move('normal', reason);
        return { state: { ...next, status: 'normal' }, transitions };
      }
      return { state: next, transitions };
    }
    case 'acknowledge': {
      const to = s.status === 'active-unack' ? 'active-ack' : s.status === 'rtn-unack' ? 'normal' : undefined;
      if (to === undefined)
        return reject('ALERT_NOTHING_TO_ACKNOWLEDGE', `nothing awaits acknowledgement in status ${s.status}`);
      move(to, 'acknowledged', event.user, event.comment);
      return { state: { ...s, status: to }, transitions };
    }
    case 'shelve': {
      if (s.status === 'out-of-service')
        return reject('ALERT_OUT_OF_SERVICE', 'an out-of-service alert cannot be shelved');
      if (!(event.untilMs > now))
        return reject(
          'ALERT_SHELVE_IN_PAST',
          `shelve expiry ${event.untilMs} ms is not after now (${now} ms)`,
        );
      move('shelved', `shelved until ${new Date(event.untilMs).toISOString()}`, event.user, event.comment);
      return {
        state: { ...withoutShelf(s, 'shelved'), shelvedUntil: event.untilMs, shelvedBy: event.user },
        transitions,
      };
    }
    case 'unshelve': {
      if (s.status !== 'shelved') return reject('ALERT_NOT_SHELVED', `status is ${s.status}, not shelved`);
      const to = resumeStatus(s);
      move(to, 'unshelved', event.user, event.comment);
      return { state: withoutShelf(s, to), transitions };
    }
    case 'remove-from-service': {
      if (s.status === 'out-of-service') return reject('ALERT_OUT_OF_SERVICE', 'already out of service');
      move('out-of-service', 'removed from service', event.user, event.comment);
      return { state: withoutShelf(s, 'out-of-service'), transitions };
    }
    case 'return-to-service': {
      if (s.status !== 'out-of-service') return reject('ALERT_NOT_OUT_OF_SERVICE', `status is ${s.status}`);
      const to = resumeStatus(s);
      move(to, 'returned to service', event.user, event.comment);
      return { state: withoutShelf(s, to), transitions };
    }
  }
}

/**
 * The alert event that a band step implies, if any: entering warning or alarm activates (with the
 * severity), returning to normal clears. Use with stepBand's `from` and `to`.
 */
export function bandToAlertEvent(from: Severity, to: Severity, reason?: string): AlertEvent | undefined {
  if (from === to) return undefined;
  const r = reason !== undefined ? { reason } : {};
  if (to === 'normal') return { type: 'clear', ...r };
  return { type: 'activate', severity: to, ...r };
}
