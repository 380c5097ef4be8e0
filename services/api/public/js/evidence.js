// An alert's evidence (what the alert job stored when it fired), as a short definition list.
import { el, num, signed, timesInText, when } from './common.js';

/** Alert states (ANSI/ISA-18.2 lifecycle) in words. */
export const STATE_WORDS = {
  active_unacknowledged: 'active, not acknowledged',
  active_acknowledged: 'active, acknowledged',
  returned_unacknowledged: 'returned, not acknowledged',
  shelved: 'shelved',
  suppressed: 'suppressed',
  out_of_service: 'out of service',
  normal: 'normal',
};

/** Plain words for the instrument fault codes of the compute job (result flags fault:<what>:<role>). */
const FAULTS = {
  stuck: 'reading stuck (no change)',
  spike: 'spike',
  range: 'outside its valid range',
  'gauge-absolute': 'gauge/absolute mix-up (a step of about one atmosphere)',
  'second-law-violation': 'entropy falls across the machine (second-law violation)',
  'outlet-colder-than-isentropic': 'outlet colder than the isentropic outlet',
  'pressure-not-positive': 'absolute pressure not positive',
};

function faultText(code) {
  return FAULTS[code] ?? code;
}

/** Role names of the plant file ("inletPressure") in words ("inlet pressure"). */
export function roleText(role) {
  return role === 'machine' ? 'the machine as a whole' : role.replace(/([A-Z])/g, ' $1').toLowerCase();
}

function duration(s) {
  if (typeof s !== 'number') return '–';
  return s % 3600 === 0 ? `${s / 3600} h` : s % 60 === 0 ? `${s / 60} min` : `${s} s`;
}

/**
 * The band detector's reason in the dashboard's words: epoch milliseconds as times, milliseconds
 * as minutes, long decimals cut to three places.
 */
export function readableReason(text) {
  return text
    .replace(/\b(\d{13})\b/g, (_m, ms) => when(new Date(Number(ms)).toISOString()))
    .replace(/\b(\d+) ms\b/g, (_m, ms) => duration(Number(ms) / 1000))
    .replace(/(-?\d+\.\d{3})\d+/g, '$1');
}

/** Link to the machine page over the judged window, with six hours either side for context. */
export function windowLink(a) {
  const w = a.evidence.window;
  if (w === undefined || w === null) return `/machine.html?id=${a.machineId}`;
  const pad = 6 * 3_600_000;
  const from = new Date(Date.parse(w.from) - pad).toISOString();
  const to = new Date(Math.min(Date.now(), Date.parse(w.to) + pad)).toISOString();
  return `/machine.html?id=${a.machineId}&from=${encodeURIComponent(from)}&to=${encodeURIComponent(to)}`;
}

function rows(pairs) {
  const dl = el('dl', { class: 'evidence' });
  for (const [k, v] of pairs) {
    if (v === null || v === undefined || v === '') continue;
    dl.append(el('dt', { text: k }), el('dd', {}, v));
  }
  return dl;
}

/** Since when the condition has held (the alert job's conditionSince), beside when the alert was raised. */
function sinceText(a, e) {
  if (typeof e.conditionSince !== 'string') return null;
  const basis = typeof e.conditionSinceBasis === 'string' ? `; ${timesInText(e.conditionSinceBasis)}` : '';
  return `${when(e.conditionSince)}, raised ${when(e.raisedAt ?? a.raisedAt)}${basis}`;
}

/** The evidence of one alert (GET /api/alerts item), drift or instrument. */
export function evidenceOf(a) {
  const e = a.evidence ?? {};
  const w = e.window;
  const windowText = w ? `${when(w.from)} – ${when(w.to)}` : null;
  const trend = el('a', { href: windowLink(a), text: 'open the trend around this window' });
  if (a.category === 'drift') {
    const b = e.band ?? {};
    const u = typeof e.expandedUDriftPts === 'number' ? e.expandedUDriftPts : null;
    return rows([
      [
        'Drift',
        typeof e.driftPts === 'number'
          ? `${signed(e.driftPts, 2)} ± ${num(u, 2)} points of efficiency (expanded uncertainty, k = ${e.k ?? 2}, about 95 %)`
          : null,
      ],
      ['Condition since', sinceText(a, e)],
      [
        'Band',
        typeof b.alarmPts === 'number'
          ? `warning at ${signed(b.warningPts, 1)}, alarm at ${signed(b.alarmPts, 1)} points; deadband ${num(b.deadbandPts, 1)}; on-delay ${duration(b.onDelayS)}, off-delay ${duration(b.offDelayS)}`
          : null,
      ],
      ['Judged over', windowText],
      [
        'Data',
        typeof e.points === 'number'
          ? `${e.points} results, ${Math.round(100 * (e.coverage ?? 0))} % of the window covered (at least ${Math.round(100 * (b.minCoverage ?? 0))} % needed)`
          : null,
      ],
      [
        'Operating point',
        typeof e.operatingPoint === 'number'
          ? `${num(e.operatingPoint, 3)}${typeof e.baselineOperatingPoint === 'string' ? ` (baseline load variable: ${e.baselineOperatingPoint})` : ''}`
          : null,
      ],
      ['Why', typeof e.reason === 'string' ? readableReason(e.reason) : null],
      ['Trend', trend],
    ]);
  }
  return rows([
    ['Fault', Array.isArray(e.faults) && e.faults.length > 0 ? e.faults.map(faultText).join('; ') : null],
    ['Condition since', sinceText(a, e)],
    ['On', typeof e.role === 'string' ? `${roleText(e.role)}${e.tagId ? ` (tag ${e.tagId})` : ''}` : null],
    ['Seen over', windowText],
    [
      'Delays',
      typeof e.onDelayS === 'number' ? `on ${duration(e.onDelayS)}, off ${duration(e.offDelayS)}` : null,
    ],
    [
      'Effect',
      'results resting on this instrument are kept out of the efficiency figures; not an efficiency alert',
    ],
    ['Trend', trend],
  ]);
}

/** Who acknowledged or shelved the alert, and until when. */
export function handledText(a) {
  const parts = [];
  if (a.acknowledgedAt) parts.push(`acknowledged by ${a.acknowledgedBy ?? '?'} ${when(a.acknowledgedAt)}`);
  if (a.state === 'shelved' && a.shelvedUntil)
    parts.push(`shelved by ${a.shelvedBy ?? '?'} until ${when(a.shelvedUntil)}`);
  return parts.join('; ');
}

/** The alert message with times written as elsewhere, and the caution (carried or not) set apart in small print. */
export function messageOf(a, caution) {
  const text = timesInText(a.message);
  const i = caution ? text.indexOf(caution) : -1;
  return el(
    'span',
    {},
    i < 0 ? text : text.slice(0, i).trimEnd(),
    ' ',
    el('span', { class: 'caution-inline', 'data-field': 'caution', text: caution }),
  );
}
