import { describe, expect, it } from 'vitest';
import {
  type AlertEvent,
  type AlertState,
  alertCategory,
  bandToAlertEvent,
  initialAlert,
  stepAlert,
} from './alerts.js';

/** Apply events in order; returns the final state and every transition. */
function play(state: AlertState, events: [number, AlertEvent][]) {
  const all = [];
  for (const [now, e] of events) {
    const r = stepAlert(state, e, now);
    state = r.state;
    all.push(...r.transitions);
  }
  return { state, transitions: all };
}

const on: AlertEvent = { type: 'activate', severity: 'alarm' };
const off: AlertEvent = { type: 'clear' };
const ack: AlertEvent = { type: 'acknowledge', user: 'ana', comment: 'seen' };

describe('stepAlert (ANSI/ISA-18.2 states)', () => {
  it('normal -> active-unack -> active-ack -> normal', () => {
    const r = play(initialAlert('drift'), [
      [1, on],
      [2, ack],
      [3, off],
    ]);
    expect(r.transitions.map((t) => [t.from, t.to, t.at])).toEqual([
      ['normal', 'active-unack', 1],
      ['active-unack', 'active-ack', 2],
      ['active-ack', 'normal', 3],
    ]);
    expect(r.transitions[1]).toMatchObject({ by: 'ana', comment: 'seen', reason: 'acknowledged' });
  });

  it('returns unacknowledged (rtn-unack), then acknowledge -> normal; re-activation -> active-unack', () => {
    const a = play(initialAlert('drift'), [
      [1, on],
      [2, off],
    ]);
    expect(a.state.status).toBe('rtn-unack');
    expect(stepAlert(a.state, ack, 3).state.status).toBe('normal');
    expect(stepAlert(a.state, on, 3).state.status).toBe('active-unack');
  });

  it('a rise from warning to alarm annunciates again', () => {
    const r = play(initialAlert('drift'), [
      [1, { type: 'activate', severity: 'warning' }],
      [2, ack],
      [3, { type: 'activate', severity: 'alarm' }],
    ]);
    expect(r.state.status).toBe('active-unack');
    expect(r.state.severity).toBe('alarm');
  });

  it('shelving expires exactly on time, into the state the condition calls for', () => {
    const shelved = play(initialAlert('drift'), [
      [1, on],
      [2, { type: 'shelve', user: 'bo', untilMs: 100, comment: 'known, planned wash' }],
    ]).state;
    expect(shelved.status).toBe('shelved');
    expect(stepAlert(shelved, { type: 'tick' }, 99).transitions).toEqual([]);
    const exp = stepAlert(shelved, { type: 'tick' }, 100);
    expect(exp.transitions).toEqual([
      { from: 'shelved', to: 'active-unack', reason: 'shelve expired', at: 100 },
    ]);
    // Condition cleared while shelved: expiry lands in normal, and nothing was annunciated meanwhile.
    const cleared = stepAlert(shelved, off, 50);
    expect(cleared.transitions).toEqual([]);
    expect(stepAlert(cleared.state, { type: 'tick' }, 100).state.status).toBe('normal');
    // An event arriving after the expiry applies the expiry first.
    const late = stepAlert(shelved, ack, 150);
    expect(late.transitions.map((t) => t.to)).toEqual(['active-unack', 'active-ack']);
  });

  it('unshelve by hand', () => {
    const s = play(initialAlert('power'), [[1, { type: 'shelve', user: 'bo', untilMs: 1000 }]]).state;
    const r = stepAlert(s, { type: 'unshelve', user: 'bo' }, 5);
    expect(r.state).toEqual(initialAlert('power'));
    expect(r.transitions[0]).toMatchObject({ from: 'shelved', to: 'normal', by: 'bo' });
  });

  it('out of service raises nothing; returning to service with the condition active annunciates', () => {
    const oos = play(initialAlert('drift'), [
      [1, { type: 'remove-from-service', user: 'cy', comment: 'overhaul' }],
    ]);
    expect(oos.state.status).toBe('out-of-service');
    const during = play(oos.state, [
      [2, on],
      [3, off],
      [4, on],
    ]);
    expect(during.transitions).toEqual([]);
    expect(during.state.status).toBe('out-of-service');
    const back = stepAlert(during.state, { type: 'return-to-service', user: 'cy' }, 5);
    expect(back.state.status).toBe('active-unack');
  });

  it('refuses impossible requests with a code and leaves the state alone', () => {
    const n = initialAlert('drift');
    expect(stepAlert(n, ack, 1).rejected?.code).toBe('ALERT_NOTHING_TO_ACKNOWLEDGE');
    expect(stepAlert(n, { type: 'shelve', user: 'x', untilMs: 1 }, 1).rejected?.code).toBe(
      'ALERT_SHELVE_IN_PAST',
    );
    expect(stepAlert(n, { type: 'unshelve', user: 'x' }, 1).rejected?.code).toBe('ALERT_NOT_SHELVED');
    expect(stepAlert(n, { type: 'return-to-service', user: 'x' }, 1).rejected?.code).toBe(
      'ALERT_NOT_OUT_OF_SERVICE',
    );
    expect(stepAlert(n, ack, 1).state).toBe(n);
  });

  it('keeps instrument faults apart from performance alerts', () => {
    expect(alertCategory('instrument-fault')).toBe('instrument');
    expect(alertCategory('drift')).toBe('performance');
    expect(alertCategory('entropy-generation')).toBe('performance');
  });

  it('bandToAlertEvent maps severity changes to events', () => {
    expect(bandToAlertEvent('normal', 'warning')).toEqual({ type: 'activate', severity: 'warning' });
    expect(bandToAlertEvent('alarm', 'normal', 'back')).toEqual({ type: 'clear', reason: 'back' });
    expect(bandToAlertEvent('alarm', 'alarm')).toBeUndefined();
  });
});
