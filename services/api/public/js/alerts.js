import { api, el, frame, when } from './common.js';
import { evidenceOf, handledText, messageOf, STATE_WORDS } from './evidence.js';

/** Shelving periods offered [h]; the API takes up to 30 days. */
const SHELVE_HOURS = [1, 8, 24, 72];

const CAUTION = document.getElementById('caution').textContent;

let me;

/**
 * Order of the list: what still needs a person first (not acknowledged), alarms before warnings,
 * shelved last; newest first within each group.
 */
function rank(a) {
  const waiting = a.state === 'active_unacknowledged' || a.state === 'returned_unacknowledged' ? 0 : 1;
  const shelved = a.state === 'shelved' ? 1 : 0;
  const level = a.level === 'alarm' ? 0 : 1;
  return [shelved, waiting, level, -Date.parse(a.raisedAt)];
}

function byRank(a, b) {
  const ra = rank(a);
  const rb = rank(b);
  for (let i = 0; i < ra.length; i++) if (ra[i] !== rb[i]) return ra[i] - rb[i];
  return 0;
}

function actions(a) {
  const box = el('span', { class: 'actions' });
  const canAct = me !== undefined && (me.role === 'engineer' || me.role === 'admin');
  const act = async (path, body) => {
    for (const b of box.querySelectorAll('button, select')) b.disabled = true;
    try {
      await api(`/api/alerts/${a.id}/${path}`, { method: 'POST', body });
      await load();
    } catch (e) {
      document.getElementById('alerts-error').textContent = e.message;
      for (const b of box.querySelectorAll('button, select')) b.disabled = false;
    }
  };
  if (a.state === 'active_unacknowledged' || a.state === 'returned_unacknowledged')
    box.append(
      el('button', {
        text: 'Acknowledge',
        'data-action': 'acknowledge',
        disabled: !canAct,
        onclick: () => act('acknowledge', {}),
      }),
    );
  if (a.state === 'shelved')
    box.append(
      el('button', {
        text: 'Unshelve',
        'data-action': 'unshelve',
        disabled: !canAct,
        onclick: () => act('unshelve', {}),
      }),
    );
  else if (a.state !== 'out_of_service') {
    const hours = el(
      'select',
      { 'aria-label': 'shelve for', 'data-field': 'shelve-hours', disabled: !canAct },
      ...SHELVE_HOURS.map((h) => el('option', { value: h, text: `${h} h`, selected: h === 8 })),
    );
    box.append(
      el(
        'span',
        { class: 'shelve' },
        el('button', {
          text: 'Shelve for',
          'data-action': 'shelve',
          disabled: !canAct,
          onclick: () => act('shelve', { hours: Number(hours.value) }),
        }),
        ' ',
        hours,
      ),
    );
  }
  if (!canAct) box.append(el('div', { class: 'sub', text: 'engineers acknowledge and shelve' }));
  return box;
}

function row(a) {
  const instrument = a.category === 'instrument';
  const handled = handledText(a);
  return el(
    'tr',
    { 'data-alert': a.id, 'data-state': a.state, class: a.state === 'shelved' ? 'shelved' : null },
    el('td', { 'data-label': 'Raised', text: when(a.raisedAt) }),
    el(
      'td',
      { 'data-label': 'Machine' },
      el('a', { href: `/machine.html?id=${a.machineId}`, text: a.machineName }),
    ),
    el(
      'td',
      { 'data-label': 'Kind' },
      el('span', {
        class: `tag ${instrument ? 'fault' : a.level}`,
        text: instrument ? 'instrument' : 'drift',
      }),
      ' ',
      el('span', { class: `tag ${a.level}`, text: a.level }),
    ),
    el(
      'td',
      { 'data-label': 'State', 'data-field': 'state' },
      STATE_WORDS[a.state] ?? a.state,
      handled ? el('div', { class: 'sub', 'data-field': 'handled', text: handled }) : null,
    ),
    el(
      'td',
      { 'data-label': 'What' },
      messageOf(a, CAUTION),
      el('details', { 'data-field': 'evidence' }, el('summary', { text: 'Evidence' }), evidenceOf(a)),
    ),
    el('td', { 'data-label': '' }, actions(a)),
  );
}

async function load() {
  const body = document.querySelector('#alerts tbody');
  const page = await api('/api/alerts?status=open&limit=200');
  const items = [...page.items].sort(byRank);
  body.replaceChildren(...items.map(row));
  if (items.length === 0)
    body.replaceChildren(el('tr', {}, el('td', { colspan: 6, class: 'sub', text: 'No open alerts.' })));
  document.getElementById('alerts').dataset.loaded = 'true';
}

me = await frame();
await load();
